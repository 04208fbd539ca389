"""API tokens for instrument PCs: made once, kept only as a SHA-256 hash."""
from __future__ import annotations

import hashlib
import secrets

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.base import utcnow
from models.core.errors import Invalid
from models.instruments.tables import ApiToken, Instrument
from models.people.tables import Person

# A recognisable prefix lets secret scanners and people tell a logbook token from other secrets.
PREFIX = "xlb_"


def token_hash(token: str) -> str:
    """Hex SHA-256 of a token; a long random token needs no slow hash."""
    return hashlib.sha256(token.encode()).hexdigest()


def create_token(
    session: Session, instrument: Instrument, created_by: Person | None = None
) -> tuple[ApiToken, str]:
    """Make a token for an instrument PC; returns the row and the token, which is shown once."""
    if instrument.retired:
        raise Invalid.one("instrument", f"{instrument.name} is retired and takes no tokens.")
    token = PREFIX + secrets.token_urlsafe(32)
    row = ApiToken(instrument_id=instrument.id, token_hash=token_hash(token),
                   created_by_id=created_by.id if created_by else None)
    session.add(row)
    session.flush()
    return row, token


def instrument_for_token(session: Session, token: str | None) -> Instrument | None:
    """The instrument a live token belongs to, or None."""
    if not token:
        return None
    row = session.scalar(sa.select(ApiToken).where(ApiToken.token_hash == token_hash(token),
                                                   ApiToken.revoked_at.is_(None)))
    return row.instrument if row is not None else None


def tokens_of(session: Session, instrument: Instrument) -> list[ApiToken]:
    """An instrument's tokens, newest first."""
    return list(session.scalars(sa.select(ApiToken).where(ApiToken.instrument_id == instrument.id)
                                .order_by(ApiToken.created_at.desc(), ApiToken.id.desc())))


def revoke_token(session: Session, row: ApiToken) -> ApiToken:
    """Stop a token from working."""
    if row.revoked_at is not None:
        raise Invalid.one("token", "This token is already revoked.")
    row.revoked_at = utcnow()
    session.flush()
    return row
