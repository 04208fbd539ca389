"""E-mail: queued in the outbox with the record it is about, delivered after the commit.

Views and commands call `send_mail` / `tell_safety_officer` before they commit; the message is saved
or rolled back with their change. `deliver_queued` (run after every request, and by commands after
they commit) and `flask mail send-pending` (cron) send it, with retries, and mark it sent.
"""
from __future__ import annotations

import sqlalchemy as sa
from flask import Blueprint, current_app, g

from models.core.base import utcnow
from models.core.outbox import queue_message
from models.people.tables import Person, PersonRole, Role
from webapp.extensions import db
from webapp.formatting import CAUTION, settings

bp = Blueprint("mail", __name__, template_folder="templates", cli_group="mail")


def send_mail(to: list[str], subject: str, body: str) -> bool:
    """Queue one message to the given addresses in the current transaction; False when none is given."""
    message_id = queue_message(db.session, list(to), subject, f"{body}\n\n--\n{CAUTION}\n", utcnow())
    if message_id is None:
        current_app.logger.warning("No address to send to: %s", subject)
        return False
    g.setdefault("outbox_ids", []).append(message_id)
    return True


def link(endpoint: str, **values) -> str:
    """An absolute address for an e-mail, on BASE_URL only (never the request's Host header)."""
    path = current_app.url_map.bind("localhost").build(endpoint, values)
    return current_app.config["BASE_URL"].rstrip("/") + path


def safety_officer_addresses() -> list[str]:
    """Every active safety officer's address, plus the lab's alert address."""
    addresses = db.session.scalars(
        sa.select(Person.email).join(PersonRole)
        .where(PersonRole.role == Role.SAFETY_OFFICER, Person.active.is_(True),
               Person.email.is_not(None))
    ).all()
    return [*addresses, settings().safety_officer_email or ""]


def tell_safety_officer(subject: str, body: str) -> bool:
    """Queue an alert to the safety officer, sent as soon as the change is committed."""
    return send_mail(safety_officer_addresses(), subject, body)


from webapp.mail import cli, panels, sender  # noqa: E402  (they register on `bp`)
from webapp.mail.sender import deliver_queued  # noqa: E402
