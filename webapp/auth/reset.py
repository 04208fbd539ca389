"""Password reset links: signed, valid for an hour, and spent once the password changes."""
from __future__ import annotations

import hashlib
from datetime import datetime, timedelta

from flask import current_app
from itsdangerous import BadSignature, URLSafeSerializer

from models.people.tables import Person
from webapp.extensions import db

VALID_FOR = timedelta(hours=1)
# The answer to a reset request, the same whether or not the login exists.
RESET_SENT_MARK = "a link to set a new password is on its way"
_SALT = "password-reset"


def _serializer() -> URLSafeSerializer:
    """Signs with the app's secret key, in a namespace of its own."""
    return URLSafeSerializer(current_app.config["SECRET_KEY"], salt=_SALT)


def _fingerprint(person: Person) -> str:
    """Changes whenever the password does, so a link works only until it has been used."""
    return hashlib.sha256(f"{person.id}:{person.password_hash or ''}".encode()).hexdigest()[:32]


def make_token(person: Person, issued: datetime) -> str:
    """A reset token for this person, issued at this moment."""
    return _serializer().dumps({"p": person.id, "h": _fingerprint(person), "t": int(issued.timestamp())})


def person_for(token: str, now: datetime) -> Person | None:
    """The active person a token still resets, or None when forged, used, expired or malformed."""
    try:
        data = _serializer().loads(token[:1000])
    except BadSignature:
        return None
    if not (isinstance(data, dict) and isinstance(data.get("p"), int) and isinstance(data.get("t"), int)):
        return None
    age = now.timestamp() - data["t"]
    if not 0 <= age <= VALID_FOR.total_seconds() or not 0 < data["p"] < 2**31:
        return None
    person = db.session.get(Person, data["p"])
    if person is None or not person.active or data.get("h") != _fingerprint(person):
        return None
    return person
