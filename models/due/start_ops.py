"""What the lab's state says to a person about to start a session: late checks, open reviews.

These notices draw on checks and dose reviews, which sit beside or above sessions, so they are
gathered here and the entry points that open a session (the Start form, the instrument PC's API)
add them to the session rules. Each lab setting decides whether a notice only warns or refuses.
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core import due_dates
from models.core.errors import Invalid
from models.core.settings import lab_settings
from models.due.due_list_ops import CHECK, horizon, instrument_items
from models.exposure.tables import Investigation
from models.instruments.tables import Instrument
from models.people.person_ops import whom_to_ask
from models.people.tables import Person
from models.sessions.session_ops import open_session, validate_opening
from models.sessions.tables import EntrySource, InstrumentSession

LATE_CHECK = "late_check"
INVESTIGATION = "investigation"


@dataclass(frozen=True)
class StartNotice:
    """One thing the person must be told at Start, and whether it stops the session."""

    kind: str
    message: str
    refuses: bool


def late_check_notice(session: Session, instrument: Instrument, now: datetime) -> StartNotice | None:
    """The instrument's safety-device check, when it is late or was never done."""
    item = next((i for i in instrument_items(session, [instrument], horizon(session, now))
                 if i.kind == CHECK), None)
    if item is None:  # retired: the session rules refuse it already
        return None
    if item.state == due_dates.NEVER_DONE:
        text = f"{instrument.name} has no passing safety-device check on record"
    elif item.state == due_dates.OVERDUE:
        text = (f"The safety-device check of {instrument.name} was due on {item.due.isoformat()} "
                f"and is {item.days_late} day{'s' if item.days_late != 1 else ''} late")
    else:
        return None
    refuses = lab_settings(session).late_check_policy == "refuse"
    then = ("The lab's rules refuse sessions until a check passes" if refuses
            else "Do the check, or ask whoever does it, before relying on the safety devices")
    return StartNotice(LATE_CHECK, f"{text}. {then}.", refuses)


def investigation_notice(session: Session, person: Person) -> StartNotice | None:
    """An open review of the person's dose: see the safety officer before further work."""
    open_review = session.scalar(
        sa.select(Investigation.id).where(Investigation.person_id == person.id,
                                          Investigation.signed_off_at.is_(None)).limit(1))
    if open_review is None:
        return None
    refuses = lab_settings(session).investigation_policy == "clearance"
    text = (f"Your dose reached an investigation level and the review is still open: see "
            f"{whom_to_ask(session)} before further work")
    then = (". The lab's rules refuse sessions until the safety officer signs the review off."
            if refuses else ".")
    return StartNotice(INVESTIGATION, text + then, refuses)


def start_notices(session: Session, instrument: Instrument, person: Person,
                  now: datetime) -> list[StartNotice]:
    """Everything the person is told at Start on this instrument, refusals first."""
    notices = [n for n in (investigation_notice(session, person),
                           late_check_notice(session, instrument, now)) if n is not None]
    return sorted(notices, key=lambda n: not n.refuses)


def validate_start(session: Session, instrument: Instrument, person: Person, now: datetime) -> None:
    """Refuse a session that a notice, under the lab's settings, does not allow."""
    refusals = [n.message for n in start_notices(session, instrument, person, now) if n.refuses]
    if refusals:
        raise Invalid.one("instrument", " ".join(refusals))


def validate_starting(session: Session, instrument: Instrument | None, operator: Person | None,
                      values: dict, now: datetime) -> None:
    """Every rule for a session that starts now: the session rules and the refusing notices."""
    errors: dict[str, str] = {}
    for check in (lambda: validate_opening(session, instrument, operator, values, now=now),
                  lambda: validate_start(session, instrument, operator, now)):
        try:
            check()
        except Invalid as error:
            errors = {**error.errors, **errors}  # the session rule's message comes first
        if instrument is None or operator is None:
            break
    if errors:
        raise Invalid(errors)


def start_session(session: Session, instrument: Instrument, operator: Person, values: dict,
                  *, source: EntrySource = EntrySource.FORM, now: datetime) -> InstrumentSession:
    """Open a session that every Start rule allows."""
    validate_starting(session, instrument, operator, values, now)
    return open_session(session, instrument, operator, values, source=source, now=now)
