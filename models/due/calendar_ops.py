"""A person's due dates as an iCalendar feed (RFC 5545) at a secret address."""
from __future__ import annotations

import hashlib
import secrets
from datetime import datetime, timedelta

import icalendar
import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.due.due_list_ops import DueItem
from models.people.tables import Person

UID_DOMAIN = "xray-logbook"


def _hash(token: str) -> str:
    """The stored form of a feed token."""
    return hashlib.sha256(token.encode("utf-8")).hexdigest()


def renew_token(session: Session, person: Person) -> str:
    """Give the person a new feed token (the old address stops working); return it once."""
    token = secrets.token_urlsafe(32)
    person.calendar_token_hash = _hash(token)
    session.flush()
    return token


def stop_feed(session: Session, person: Person) -> None:
    """Turn the person's feed off."""
    person.calendar_token_hash = None
    session.flush()


def person_for_token(session: Session, token: str) -> Person | None:
    """The active person whose feed this token opens, if any."""
    if not token:
        return None
    return session.scalar(sa.select(Person).where(Person.calendar_token_hash == _hash(token),
                                                  Person.active.is_(True)))


def build_calendar(items: list[DueItem], name: str, stamp: datetime,
                   url_for_item=lambda item: None) -> bytes:
    """An iCalendar with one all-day event per due date; UIDs stay the same between fetches."""
    calendar = icalendar.Calendar()
    calendar.add("prodid", "-//X-ray safety logbook//due dates//EN")
    calendar.add("version", "2.0")
    calendar.add("calscale", "GREGORIAN")
    calendar.add("x-wr-calname", name)
    for item in items:
        event = icalendar.Event()
        event.add("uid", f"{item.key}@{UID_DOMAIN}")
        event.add("dtstamp", stamp)
        event.add("dtstart", item.due)
        # All-day events end on the next day (DTEND is exclusive, RFC 5545 3.6.1).
        event.add("dtend", item.due + timedelta(days=1))
        event.add("summary", f"{item.what}: {item.subject}")
        event.add("description", f"{item.what} for {item.subject}, due {item.due.isoformat()} "
                                 f"({item.state_label}).")
        event.add("transp", "TRANSPARENT")
        url = url_for_item(item)
        if url:
            event.add("url", url)
        calendar.add_component(event)
    return calendar.to_ical()
