"""Incident operations: report, follow up, estimate a dose, close."""
from __future__ import annotations

from datetime import date, datetime

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.base import utcnow
from models.core.codes import Location, Quantity, Result
from models.core.errors import Invalid
from models.doses.tables import DoseRecord, DoseSource
from models.incidents.tables import Incident, IncidentNote, IncidentType
from models.instruments.instrument_ops import set_out_of_service
from models.instruments.tables import Instrument
from models.people.tables import Person

TYPE_LABELS = {
    IncidentType.SUSPECTED_EXPOSURE: "Suspected exposure",
    IncidentType.EQUIPMENT_FAULT: "Equipment fault",
    IncidentType.WARNING_LIGHT_FAILURE: "Warning-light failure",
    IncidentType.NEAR_MISS: "Near miss",
    IncidentType.OTHER: "Other",
}

# Extremity dosimeters measure skin dose of the hand; Hp(10) or Hp(3) there has no meaning.
_HAND_LOCATIONS = {Location.LEFT_HAND, Location.RIGHT_HAND}


def validate_report(
    *, type: IncidentType | None, occurred_at: datetime | None, description: str | None,
    now: datetime | None = None, **_other,
) -> None:
    """Refuse, by field, a report missing what the safety officer needs."""
    now = now or utcnow()
    errors = {}
    if type is None:
        errors["type"] = "Choose what kind of incident it was."
    if occurred_at is None:
        errors["occurred_at"] = "Enter when it happened."
    elif occurred_at > now:
        errors["occurred_at"] = "The time of the incident cannot be in the future."
    if not (description or "").strip():
        errors["description"] = "Describe what happened."
    if errors:
        raise Invalid(errors)


def report_incident(
    session: Session, *, reported_by: Person, type: IncidentType | None,
    occurred_at: datetime | None, instrument: Instrument | None, people: list[Person],
    description: str | None, immediate_actions: str | None, now: datetime | None = None,
) -> Incident:
    """Record a reported incident; the caller tells the safety officer."""
    now = now or utcnow()
    validate_report(type=type, occurred_at=occurred_at, description=description, now=now)
    incident = Incident(
        type=type, occurred_at=occurred_at, instrument_id=instrument.id if instrument else None,
        description=description.strip(), immediate_actions=(immediate_actions or "").strip(),
        reported_by_id=reported_by.id, reported_at=now)
    incident.people = list(people)
    session.add(incident)
    session.flush()
    return incident


def _still_open(incident: Incident) -> None:
    """Refuse follow-up on a closed incident."""
    if incident.closed_at is not None:
        raise Invalid.one("incident", "This incident is closed.")


def add_note(session: Session, incident: Incident, author: Person, text: str | None) -> IncidentNote:
    """Add a dated follow-up note."""
    if not (text or "").strip():
        raise Invalid.one("text", "Write the note.")
    note = IncidentNote(incident_id=incident.id, author_id=author.id, text=text.strip())
    session.add(note)
    session.flush()
    return note


def stop_instrument(session: Session, incident: Incident, author: Person, reason: str | None) -> None:
    """Put the incident's instrument out of service and note it on the incident."""
    _still_open(incident)
    if incident.instrument is None:
        raise Invalid.one("reason", "No instrument is named on this incident.")
    if not (reason or "").strip():
        raise Invalid.one("reason", "Say why the instrument is out of service.")
    text = f"Out of service after incident {incident.id}: {reason.strip()}"
    set_out_of_service(session, incident.instrument, text)
    add_note(session, incident, author, f"Put {incident.instrument.name} out of service: {reason.strip()}")


def record_estimated_dose(
    session: Session, incident: Incident, *, person: Person | None, quantity: Quantity | None,
    location: Location | None, wear_start: date | None, wear_end: date | None,
    value_msv: float | None, basis: str | None, entered_unit: str, created_by: Person,
) -> DoseRecord:
    """Store the safety officer's dose estimate for one person, with its written basis."""
    errors = {}
    if person is None:
        errors["person"] = "Choose whose dose this is."
    if quantity is None:
        errors["quantity"] = "Choose the quantity."
    if location is None:
        errors["location"] = "Choose where on the body."
    elif location in _HAND_LOCATIONS and quantity not in (None, Quantity.HP007):
        errors["quantity"] = "A hand dose is estimated as Hp(0.07)."
    if wear_start is None:
        errors["wear_start"] = "Enter the first day of the period."
    if wear_end is None:
        errors["wear_end"] = "Enter the last day of the period."
    elif wear_start is not None and wear_end < wear_start:
        errors["wear_end"] = "The period must end on or after its first day."
    if value_msv is None:
        errors["value"] = "Enter the estimated dose."
    elif not value_msv >= 0:
        errors["value"] = "A dose cannot be negative."
    if not (basis or "").strip():
        errors["basis"] = "Write the basis of the estimate (how it was worked out)."
    if errors:
        raise Invalid(errors)
    record = DoseRecord(
        person_id=person.id, wear_start=wear_start, wear_end=wear_end, quantity=quantity,
        location=location, value_msv=value_msv, result=Result.MEASURED,
        source=DoseSource.INCIDENT_ESTIMATE, basis=basis.strip(), incident_id=incident.id,
        entered_unit=entered_unit, created_by_id=created_by.id)
    session.add(record)
    session.flush()
    return record


def estimated_doses(session: Session, incident: Incident) -> list[DoseRecord]:
    """Dose records estimated for this incident."""
    return list(session.scalars(
        sa.select(DoseRecord).where(DoseRecord.incident_id == incident.id).order_by(DoseRecord.id)))


def close_incident(session: Session, incident: Incident, closed_by: Person, note: str | None) -> Incident:
    """Close an incident with a closing note."""
    _still_open(incident)
    if not (note or "").strip():
        raise Invalid.one("closing_note", "Write a closing note: what was found and done.")
    incident.closed_at = utcnow()
    incident.closed_by_id = closed_by.id
    incident.closing_note = note.strip()
    session.flush()
    return incident


def open_incidents(session: Session) -> list[Incident]:
    """Incidents not closed, oldest first."""
    return list(session.scalars(
        sa.select(Incident).where(Incident.closed_at.is_(None)).order_by(Incident.reported_at)))


def incidents_seen_by(session: Session, person: Person, *, everyone: bool) -> list[Incident]:
    """Incidents newest first: all of them, or those the person reported or is named in."""
    query = sa.select(Incident).order_by(Incident.occurred_at.desc(), Incident.id.desc())
    if not everyone:
        query = query.where(sa.or_(Incident.reported_by_id == person.id,
                                   Incident.people.any(Person.id == person.id)))
    return list(session.scalars(query))
