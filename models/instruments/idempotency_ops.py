"""Idempotency keys: a retried post from an instrument PC gets the first answer, not a second write."""
from __future__ import annotations

import hashlib
import re

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.database import hold_write_lock
from models.core.errors import Invalid
from models.instruments.tables import IdempotencyKey, Instrument

FIELD = "Idempotency-Key"
# Visible ASCII, as in the IETF draft "The Idempotency-Key HTTP Header Field" (a UUID fits easily).
_KEY = re.compile(r"[\x21-\x7e]{1,255}")


def request_hash(method: str, path: str, body: bytes) -> str:
    """Hex SHA-256 of what was asked: the same key with another request is a client's mistake."""
    digest = hashlib.sha256()
    for part in (method.encode(), path.encode(), body):
        digest.update(len(part).to_bytes(8, "big") + part)
    return digest.hexdigest()


def _earlier(session: Session, instrument: Instrument, key: str, digest: str) -> IdempotencyKey | None:
    """The answer kept for this key, refusing it for a different request."""
    row = session.scalar(sa.select(IdempotencyKey).where(
        IdempotencyKey.instrument_id == instrument.id, IdempotencyKey.key == key))
    if row is not None and row.request_hash != digest:
        raise Invalid.one(FIELD, "This Idempotency-Key was already used for a different request; "
                                 "use a new key for a new request.")
    return row


def claim(session: Session, instrument: Instrument, key: str, digest: str) -> IdempotencyKey:
    """The row for this key: an earlier answer (status set) or a new claim to settle before commit.

    The claim is written first, so a concurrent retry waits for this transaction (the write lock
    on SQLite, the unique index on PostgreSQL) and then finds the answer; a refused request rolls
    its claim back, so only answers that wrote something are kept.
    """
    if not isinstance(key, str) or not _KEY.fullmatch(key):
        raise Invalid.one(FIELD, "An Idempotency-Key is 1 to 255 visible ASCII characters.")
    hold_write_lock(session)
    row = _earlier(session, instrument, key, digest)
    if row is not None:
        return row
    row = IdempotencyKey(instrument_id=instrument.id, key=key, request_hash=digest)
    try:
        with session.begin_nested():
            session.add(row)
            session.flush()
    except sa.exc.IntegrityError:
        # A retry racing the first post on PostgreSQL: that one committed while we waited.
        return _earlier(session, instrument, key, digest)
    return row


def settle(session: Session, row: IdempotencyKey, status: int, response: str) -> None:
    """Keep the answer given to a claimed key, in the transaction of the write it answers."""
    row.status, row.response = status, response
    session.flush()
