"""Authorising people on instruments, revoking, and finding whom to ask."""
from __future__ import annotations

from datetime import date

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.base import utcnow
from models.core.codes import WorkerCategory
from models.core.due_dates import refresher_due
from models.core.errors import Invalid
from models.core.settings import lab_settings
from models.instruments.instrument_ops import active_instruments, current_authorisations
from models.instruments.tables import Authorisation, AuthorisationLevel, Instrument
from models.people.person_ops import whom_to_ask
from models.people.tables import Person, Role


def authorisation_on(
    session: Session, person: Person, instrument: Instrument, on_date: date
) -> Authorisation | None:
    """The person's authorisation on the instrument that holds on that date, if any.

    A renewed row still covers the days before its successor's training, so sessions written up
    afterwards keep the authorisation they ran under; a revoked one covers nothing.
    """
    rows = session.scalars(
        sa.select(Authorisation)
        .where(Authorisation.person_id == person.id,
               Authorisation.instrument_id == instrument.id,
               sa.or_(Authorisation.revoked_at.is_(None), Authorisation.replaced_by_id.is_not(None)),
               Authorisation.trained_on <= on_date,
               Authorisation.refresher_due >= on_date)
        .order_by(Authorisation.granted_at.desc(), Authorisation.id.desc())
    )
    for row in rows:
        if row.replaced_by_id is None:
            return row
        successor = session.get(Authorisation, row.replaced_by_id)
        if on_date < successor.trained_on:
            return row
    return None


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
    elif person is not None and "person" not in errors:
        errors.update(_category_errors(session, person, level))
    if trained_on is None:
        errors["trained_on"] = "Enter the training date."
    elif refresher_due_on is not None and refresher_due_on < trained_on:
        errors["refresher_due"] = (
            f"The refresher date {refresher_due_on.isoformat()} is before the training date "
            f"{trained_on.isoformat()}.")
    if errors:
        raise Invalid(errors)


def _category_errors(session: Session, person: Person, level: AuthorisationLevel) -> dict:
    """What a person's worker category allows: members of the public and trainees only supervised."""
    if person.category == WorkerCategory.PUBLIC:
        if lab_settings(session).public_authorisation == "none":
            return {"person": (f"{person.name} is a member of the public; this lab's settings do "
                               "not allow authorising members of the public on an instrument.")}
        if level == AuthorisationLevel.INDEPENDENT:
            return {"level": (f"{person.name} is a member of the public and may be authorised "
                              "only as supervised.")}
    if person.category == WorkerCategory.TRAINEE and level == AuthorisationLevel.INDEPENDENT:
        return {"level": (f"{person.name} is a trainee under 18 and may be authorised only as "
                          "supervised.")}
    return {}


def standing_authorisation(
    session: Session, person: Person, instrument: Instrument
) -> Authorisation | None:
    """The person's authorisation on the instrument that is not revoked, expired or not."""
    return session.scalar(
        sa.select(Authorisation)
        .where(Authorisation.person_id == person.id, Authorisation.instrument_id == instrument.id,
               Authorisation.revoked_at.is_(None))
        .limit(1)
    )


def grant_authorisation(
    session: Session, *, person: Person, instrument: Instrument, level: AuthorisationLevel,
    trained_on: date, refresher_due_on: date | None = None, granted_by: Person | None = None,
) -> Authorisation:
    """Authorise a person on an instrument, replacing their standing one (kept as history).

    The refresher falls due 12 months after training unless a date is given.
    """
    validate_authorisation(session, person=person, instrument=instrument, level=level,
                        trained_on=trained_on, refresher_due_on=refresher_due_on)
    old = standing_authorisation(session, person, instrument)
    if old is not None:
        old.revoked_at = utcnow()
        session.flush()  # the current-row index must see the old row ended first
    authorisation = Authorisation(
        person_id=person.id, instrument_id=instrument.id, level=level, trained_on=trained_on,
        refresher_due=refresher_due_on or refresher_due(trained_on),
        granted_by_id=granted_by.id if granted_by else None)
    session.add(authorisation)
    session.flush()
    if old is not None:
        old.replaced_by_id = authorisation.id
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


def supervisors_on(session: Session, instrument: Instrument, on_date: date) -> list[Person]:
    """Active people independently authorised on the instrument on that date, by name."""
    return list(session.scalars(
        sa.select(Person).join(Authorisation, Authorisation.person_id == Person.id)
        .where(Authorisation.instrument_id == instrument.id, Authorisation.revoked_at.is_(None),
               Authorisation.level == AuthorisationLevel.INDEPENDENT,
               Authorisation.trained_on <= on_date, Authorisation.refresher_due >= on_date,
               Person.active.is_(True))
        .order_by(Person.name)
    ))


def why_not_supervisor(
    session: Session, supervisor: Person | None, operator: Person, instrument: Instrument,
    on_date: date,
) -> str | None:
    """None when the person may supervise the operator on the instrument that day, else why not."""
    if supervisor is None:
        return (f"{operator.name} is authorised on {instrument.name} only as supervised: name the "
                "person supervising this session.")
    if supervisor.id == operator.id:
        return "A person cannot supervise their own session."
    if supervisor not in supervisors_on(session, instrument, on_date):
        return (f"{supervisor.name} is not independently authorised on {instrument.name} on "
                f"{on_date.isoformat()}; choose someone who is.")
    return None


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
