"""Authorising people on instruments, revoking, and finding whom to ask."""
from __future__ import annotations

from datetime import date

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.base import utcnow
from models.core.due_dates import refresher_due
from models.core.errors import Invalid
from models.instruments.instrument_ops import active_instruments, current_authorisations
from models.instruments.tables import Authorisation, AuthorisationLevel, Instrument
from models.people.person_ops import whom_to_ask
from models.people.tables import Person, Role


def authorisation_on(
    session: Session, person: Person, instrument: Instrument, on_date: date
) -> Authorisation | None:
    """The person's authorisation on the instrument that holds on that date, if any."""
    return session.scalar(
        sa.select(Authorisation)
        .where(Authorisation.person_id == person.id,
               Authorisation.instrument_id == instrument.id,
               Authorisation.revoked_at.is_(None),
               Authorisation.trained_on <= on_date,
               Authorisation.refresher_due >= on_date)
        .order_by(Authorisation.refresher_due.desc())
        .limit(1)
    )


def latest_authorisation(
    session: Session, person: Person, instrument: Instrument
) -> Authorisation | None:
    """The person's most recently granted authorisation on the instrument, revoked or not."""
    return session.scalar(
        sa.select(Authorisation)
        .where(Authorisation.person_id == person.id, Authorisation.instrument_id == instrument.id)
        .order_by(Authorisation.granted_at.desc(), Authorisation.id.desc())
        .limit(1)
    )


def why_not_authorised(
    session: Session, person: Person, instrument: Instrument, on_date: date
) -> str | None:
    """None when the person may run the instrument on that date, else a message saying why not."""
    if authorisation_on(session, person, instrument, on_date) is not None:
        return None
    ask = whom_to_ask(session)
    last = latest_authorisation(session, person, instrument)
    if last is None:
        why = f"{person.name} is not authorised on {instrument.name}"
    elif last.revoked_at is not None:
        why = f"{person.name}'s authorisation on {instrument.name} was revoked"
    elif last.refresher_due < on_date:
        why = (f"{person.name}'s authorisation on {instrument.name} ran out: the refresher "
               f"training was due on {last.refresher_due.isoformat()}")
    else:
        why = (f"{person.name}'s authorisation on {instrument.name} starts on "
               f"{last.trained_on.isoformat()}")
    return f"{why}. Ask {ask} to authorise you."


def validate_authorisation(
    session: Session, *, person: Person | None, instrument: Instrument | None,
    level: AuthorisationLevel | None, trained_on: date | None, refresher_due_on: date | None,
) -> None:
    """Refuse, by field, an authorisation that cannot be granted."""
    errors = {}
    if person is None or not person.active:
        errors["person"] = "Choose an active person."
    if instrument is None or instrument.retired:
        errors["instrument"] = "Choose an instrument that is not retired."
    if level is None:
        errors["level"] = "Choose supervised or independent."
    if trained_on is None:
        errors["trained_on"] = "Enter the training date."
    elif refresher_due_on is not None and refresher_due_on < trained_on:
        errors["refresher_due"] = (
            f"The refresher date {refresher_due_on.isoformat()} is before the training date "
            f"{trained_on.isoformat()}.")
    if errors:
        raise Invalid(errors)


def grant_authorisation(
    session: Session, *, person: Person, instrument: Instrument, level: AuthorisationLevel,
    trained_on: date, refresher_due_on: date | None = None, granted_by: Person | None = None,
) -> Authorisation:
    """Authorise a person on an instrument; the refresher falls due 12 months after training."""
    validate_authorisation(session, person=person, instrument=instrument, level=level,
                        trained_on=trained_on, refresher_due_on=refresher_due_on)
    authorisation = Authorisation(
        person_id=person.id, instrument_id=instrument.id, level=level, trained_on=trained_on,
        refresher_due=refresher_due_on or refresher_due(trained_on),
        granted_by_id=granted_by.id if granted_by else None)
    session.add(authorisation)
    session.flush()
    return authorisation


def revoke_authorisation(session: Session, authorisation: Authorisation) -> Authorisation:
    """Withdraw an authorisation; the row stays, so the history shows who was allowed when."""
    if authorisation.revoked_at is not None:
        raise Invalid.one("authorisation", "This authorisation is already revoked.")
    authorisation.revoked_at = utcnow()
    session.flush()
    return authorisation


def authorised_users(session: Session, instrument: Instrument) -> list[Authorisation]:
    """Authorisations on an instrument that are not revoked, newest per person, by name."""
    rows = session.scalars(
        sa.select(Authorisation).join(Authorisation.person)
        .where(Authorisation.instrument_id == instrument.id, Authorisation.revoked_at.is_(None),
               Person.active.is_(True))
        .order_by(Person.name, Authorisation.refresher_due.desc())
    )
    newest: dict[int, Authorisation] = {}
    for row in rows:
        newest.setdefault(row.person_id, row)
    return list(newest.values())






def authorised_for(session: Session, person: Person, instrument: Instrument, today: date) -> bool:
    """The safety officer, or an operator with a current authorisation on the instrument."""
    if person.has_role(Role.SAFETY_OFFICER):
        return True
    return any(a.instrument_id == instrument.id
               for a in current_authorisations(session, person, today))


def instruments_for(session: Session, person: Person, today: date) -> list[Instrument]:
    """The instruments a person may survey or ask a bypass for."""
    if person.has_role(Role.SAFETY_OFFICER):
        return active_instruments(session)
    allowed = {a.instrument_id for a in current_authorisations(session, person, today)}
    return [i for i in active_instruments(session) if i.id in allowed]
