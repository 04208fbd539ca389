"""What a login session carries, and when it has ended: epoch, idle time and absolute lifetime.

The session cookie is signed, not stored, so ending it on the server means the server must be able
to say no: each login copies the person's login epoch into the cookie, and raising the epoch
(logout, password, role or account change) makes every cookie carrying an older one worthless.
"""
from __future__ import annotations

from flask import session

from models.core.base import utcnow
from models.people.account_ops import login_epoch
from models.people.tables import Person
from webapp.extensions import db
from webapp.formatting import settings

EPOCH, STARTED, SEEN = "_login_epoch", "_login_started", "_login_seen"
# Refresh "last seen" at most once a minute, so the cookie is not rewritten on every request.
SEEN_RESOLUTION_S = 60


def begin(person: Person) -> None:
    """Start a fresh login session for this person (the caller has cleared the old one)."""
    now = utcnow().timestamp()
    session[EPOCH] = login_epoch(db.session, person.id)
    session[STARTED] = session[SEEN] = now


def keep_epoch(person: Person) -> None:
    """Let this session outlive an epoch raise the person made themselves (a password change)."""
    session[EPOCH] = login_epoch(db.session, person.id)


def still_valid(person: Person) -> bool:
    """True while the session's epoch is current and it is neither idle too long nor too old."""
    started, seen = session.get(STARTED), session.get(SEEN)
    if session.get(EPOCH) != login_epoch(db.session, person.id) or started is None or seen is None:
        return False
    lab, now = settings(), utcnow().timestamp()
    if now - seen > lab.idle_timeout_minutes * 60 or now - started > lab.session_lifetime_hours * 3600:
        return False
    if now - seen > SEEN_RESOLUTION_S:
        session[SEEN] = now
    return True
