"""Who is to be reminded of what, and the note that stops a second run repeating it.

A person hears about a task once when it falls due soon, once when it becomes late (or is found
never done), and then once a week while it stays late. So a daily run reminds without nagging
every day, and a second run on the same day finds nothing new to send.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, datetime

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core import due_dates
from models.core.settings import lab_date
from models.due.due_list_ops import DueItem, lab_items, pending, person_items
from models.due.tables import ReminderSent
from models.people.person_ops import safety_officers
from models.people.tables import Person

DIGEST = "digest:"


def reminder_key(item: DueItem) -> str:
    """The reminder's name: the task, its state and, while late, the week of lateness."""
    if item.state in (due_dates.OVERDUE, due_dates.NEVER_DONE):
        return f"{item.key}:{item.state}:{item.days_late // 7}"
    return f"{item.key}:{item.state}"


@dataclass
class Reminder:
    """One e-mail to be sent: to whom, everything open for them, and what is new."""

    person: Person
    open_items: list[DueItem]
    new_items: list[DueItem]
    keys: list[str] = field(default_factory=list)
    digest: bool = False


def _sent_keys(session: Session, person_ids: list[int]) -> set[str]:
    """Every reminder key already sent to these people."""
    if not person_ids:
        return set()
    return set(session.scalars(
        sa.select(ReminderSent.item_key).where(ReminderSent.person_id.in_(person_ids))))


def _reminder(session: Session, person: Person, items: list[DueItem], prefix: str,
              also_sent_to: list[int]) -> Reminder | None:
    """A reminder if any open item was not yet reminded, else None."""
    open_items = pending(items)
    sent = _sent_keys(session, also_sent_to)
    new = [item for item in open_items if prefix + reminder_key(item) not in sent]
    if not new:
        return None
    return Reminder(person, open_items, new, [prefix + reminder_key(item) for item in new],
                    digest=bool(prefix))


def plan_reminders(session: Session, now: datetime) -> list[Reminder]:
    """Personal reminders for everyone with an address, then the safety officer's digest."""
    reminders = []
    people = session.scalars(
        sa.select(Person).where(Person.active.is_(True), Person.email.is_not(None))
        .order_by(Person.id))
    for person in people:
        reminder = _reminder(session, person, person_items(session, person, now, pending_only=True), "",
                             [person.id])
        if reminder:
            reminders.append(reminder)
    officers = safety_officers(session)
    if officers:
        # One digest for the lab, noted against every safety officer so none gets it twice.
        digest = _reminder(session, officers[0], lab_items(session, now, pending_only=True), DIGEST,
                           [o.id for o in officers])
        if digest:
            reminders.append(digest)
    return reminders


def record_sent(session: Session, reminder: Reminder, now: datetime) -> None:
    """Note a sent reminder so that it is not sent again."""
    people = safety_officers(session) if reminder.digest else [reminder.person]
    sent_on = lab_date(session, now)
    for person in people:
        session.add_all(ReminderSent(person_id=person.id, item_key=key, sent_on=sent_on, sent_at=now)
                        for key in reminder.keys)
    session.flush()


def anchor_key(on: date) -> str:
    """The note of the month's audit anchor e-mail."""
    return f"audit-anchor:{on:%Y-%m}"


def anchor_sent(session: Session, key: str) -> bool:
    """True when this month's audit anchor already went to the safety officers."""
    return session.scalar(sa.select(sa.exists().where(ReminderSent.item_key == key)))


def record_anchor_sent(session: Session, key: str, now: datetime) -> None:
    """Note the month's anchor e-mail against every safety officer."""
    sent_on = lab_date(session, now)
    session.add_all(ReminderSent(person_id=o.id, item_key=key, sent_on=sent_on, sent_at=now)
                    for o in safety_officers(session))
    session.flush()
