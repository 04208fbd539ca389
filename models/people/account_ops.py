"""Accounts: passwords and the login epoch that ends every session of a person at once."""
from __future__ import annotations

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.people.tables import LoginEpoch, Person


def login_epoch(session: Session, person_id: int) -> int:
    """The person's current epoch; a login session carrying another one has been ended."""
    return session.scalar(sa.select(LoginEpoch.epoch).where(LoginEpoch.person_id == person_id)) or 0


def end_sessions(session: Session, person: Person) -> int:
    """End every login session of this person (logout, password, role or account change)."""
    row = session.scalar(sa.select(LoginEpoch).where(LoginEpoch.person_id == person.id).with_for_update())
    if row is None:
        row = LoginEpoch(person_id=person.id, epoch=0)
        session.add(row)
    row.epoch += 1
    session.flush()
    return row.epoch


def set_password(session: Session, person: Person, password_hash: str) -> int:
    """Store a new password (already checked and hashed) and end the person's other sessions."""
    person.password_hash = password_hash
    return end_sessions(session, person)
