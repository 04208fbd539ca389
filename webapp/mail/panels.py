"""The safety officer's view of e-mail that has not gone out yet."""
from __future__ import annotations

from flask import url_for

from models.core.outbox import undelivered
from models.people.tables import Person, Role
from webapp.extensions import db
from webapp.slots import Attention, Severity, attention, home_panels


@home_panels.add("mail/_undelivered.html", {Role.SAFETY_OFFICER}, order=5)
def undelivered_panel(_person: Person) -> dict:
    """How many messages wait to be sent, and the oldest of them with their last error."""
    count, oldest = undelivered(db.session)
    return {"count": count, "messages": oldest}


@attention.add(order=70)
def _undelivered_line() -> list[Attention]:
    """One line while alerts or reminders wait to be sent."""
    count, _ = undelivered(db.session, limit=0)
    if not count:
        return []
    return [Attention(Severity.UNDELIVERED_MAIL,
                      f"{count} e-mail{'s' if count != 1 else ''} not delivered yet: alerts may not "
                      "have reached anyone; tell people in person and check the mail settings",
                      url_for("home.index", _anchor="undelivered-mail"), "mail not sent")]
