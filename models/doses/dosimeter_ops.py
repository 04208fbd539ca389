"""Dosimeters: issue to a wearer, return, wear periods, and the results that never came.

Wear periods follow the calendar: a monthly dosimeter's wear periods are calendar months, a
quarterly one's calendar quarters, cut at the issue date and at the return date.

A dosimeter is listed as not returned when either
- a current dose record for it (or for a person without a dosimeter) says lost or not returned,
  and no estimate has replaced it yet; or
- its latest wear period that ended more than RESULT_GRACE_DAYS days ago has no dose record at
  all (the badge never went back to the service, or its result was never entered).
"""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date, timedelta

import sqlalchemy as sa
from sqlalchemy.orm import Session, joinedload

from models.core.codes import Location
from models.core.errors import Invalid
from models.doses.tables import UNRETURNED, DoseRecord, Dosimeter, DosimeterKind, ExchangeCycle, Hand
from models.doses.version_ops import current_records_query
from models.people.tables import Person

# Days after a wear period's end by which the dosimetry service's result is expected; a service
# reports within a few weeks of receiving the badge, so a longer silence means it never arrived.
RESULT_GRACE_DAYS = 45
_MONTHS = {ExchangeCycle.MONTHLY: 1, ExchangeCycle.QUARTERLY: 3}


def location_of(dosimeter: Dosimeter) -> Location:
    """Where a dosimeter's results are recorded."""
    if dosimeter.kind is DosimeterKind.RING:
        return Location.LEFT_HAND if dosimeter.hand is Hand.LEFT else Location.RIGHT_HAND
    return {DosimeterKind.WHOLE_BODY: Location.WHOLE_BODY, DosimeterKind.EYE: Location.EYE,
            DosimeterKind.ABDOMEN: Location.ABDOMEN}[dosimeter.kind]


def describe_dosimeter(dosimeter: Dosimeter) -> str:
    """A dosimeter's kind in words, with the hand for a ring."""
    if dosimeter.kind is DosimeterKind.RING:
        return f"{dosimeter.hand.value} hand ring"
    return {DosimeterKind.WHOLE_BODY: "whole body", DosimeterKind.EYE: "eye (lens)",
            DosimeterKind.ABDOMEN: "abdomen"}[dosimeter.kind]


def calendar_period(day: date, cycle: ExchangeCycle) -> tuple[date, date]:
    """The calendar month or quarter holding `day`, both ends inclusive."""
    months = _MONTHS[cycle]
    first_month = (day.month - 1) // months * months + 1
    start = date(day.year, first_month, 1)
    following = date(start.year + (first_month + months - 1) // 12, (first_month + months - 1) % 12 + 1, 1)
    return start, following - timedelta(days=1)


def wear_period(dosimeter: Dosimeter, day: date) -> tuple[date, date]:
    """The dosimeter's wear period holding `day`: its calendar period cut to the time it was issued."""
    start, end = calendar_period(day, dosimeter.exchange_cycle)
    end = min(end, dosimeter.returned_on) if dosimeter.returned_on else end
    return max(start, dosimeter.issued_on), end


def last_overdue_period(dosimeter: Dosimeter, today: date,
                        grace_days: int = RESULT_GRACE_DAYS) -> tuple[date, date] | None:
    """The latest wear period that ended more than `grace_days` ago, or None if none has yet."""
    cutoff = today - timedelta(days=grace_days + 1)
    last_worn = min(cutoff, dosimeter.returned_on) if dosimeter.returned_on else cutoff
    if last_worn < dosimeter.issued_on:
        return None
    start, end = wear_period(dosimeter, last_worn)
    if end > cutoff:
        if start <= dosimeter.issued_on:
            return None
        start, end = wear_period(dosimeter, start - timedelta(days=1))
    return start, end


def validate_issue(session: Session, *, serial: str | None, kind: DosimeterKind, hand: Hand | None,
                wearer_id: int | None, issued_on: date | None) -> None:
    """Refuse a dosimeter without a serial, wearer or date, a serial on file, or a ring without a hand."""
    serial = (serial or "").strip()
    errors = {}
    if not serial:
        errors["serial"] = "Enter the dosimeter's serial number."
    else:
        taken = session.scalar(sa.select(Dosimeter).where(Dosimeter.serial == serial))
        if taken is not None:
            errors["serial"] = f"Dosimeter {serial} is already recorded (issued to {taken.wearer.name})."
    wearer = session.get(Person, wearer_id) if wearer_id else None
    if wearer is None or not wearer.active:
        errors["wearer"] = "Choose an active person to wear the dosimeter."
    if issued_on is None:
        errors["issued_on"] = "Enter the date the dosimeter was issued."
    if kind is DosimeterKind.RING and hand is None:
        errors["kind"] = "Say which hand the ring is worn on."
    if errors:
        raise Invalid(errors)


def issue_dosimeter(session: Session, *, serial: str, kind: DosimeterKind, hand: Hand | None,
                    wearer_id: int | None, issued_on: date | None,
                    exchange_cycle: ExchangeCycle) -> Dosimeter:
    """Issue a dosimeter to a wearer; serials are unique and a ring names its hand."""
    validate_issue(session, serial=serial, kind=kind, hand=hand, wearer_id=wearer_id, issued_on=issued_on)
    dosimeter = Dosimeter(serial=serial.strip(), kind=kind, hand=hand if kind is DosimeterKind.RING else None,
                          wearer_id=wearer_id, issued_on=issued_on, exchange_cycle=exchange_cycle)
    session.add(dosimeter)
    session.flush()
    return dosimeter


def return_dosimeter(session: Session, dosimeter: Dosimeter, returned_on: date | None) -> Dosimeter:
    """Record that the wearer handed the dosimeter back for good."""
    if dosimeter.returned_on is not None:
        raise Invalid.one("returned_on", f"Dosimeter {dosimeter.serial} was already returned on "
                                         f"{dosimeter.returned_on}.")
    if returned_on is None:
        raise Invalid.one("returned_on", "Enter the date the dosimeter came back.")
    if returned_on < dosimeter.issued_on:
        raise Invalid.one("returned_on", f"The return date {returned_on} is before the issue date "
                                         f"{dosimeter.issued_on}.")
    dosimeter.returned_on = returned_on
    session.flush()
    return dosimeter


@dataclass(frozen=True)
class MissingResult:
    """A wear period with no usable result: what, whose, which period, and why."""

    person: Person
    dosimeter: Dosimeter | None
    record: DoseRecord | None
    start: date
    end: date
    why: str


def missing_results(session: Session, today: date,
                    grace_days: int = RESULT_GRACE_DAYS) -> list[MissingResult]:
    """Dosimeters not returned (see the module's rule), oldest wear period first."""
    found = []
    reported = session.scalars(
        current_records_query().where(sa.text(f"dose_record.{UNRETURNED}"))
        .options(joinedload(DoseRecord.person), joinedload(DoseRecord.dosimeter)))
    for record in reported:
        found.append(MissingResult(
            record.person, record.dosimeter, record, record.wear_start, record.wear_end,
            f"reported {record.result.value.replace('_', ' ')}; no estimate entered yet"))
    overdue = {}
    for dosimeter in session.scalars(sa.select(Dosimeter).options(joinedload(Dosimeter.wearer))):
        if (period := last_overdue_period(dosimeter, today, grace_days)) is not None:
            overdue[dosimeter] = period
    # Only the overdue dosimeters' records are looked at: with none, the records are not read at all.
    latest = dict(session.execute(
        sa.select(DoseRecord.dosimeter_id, sa.func.max(DoseRecord.wear_end))
        .where(DoseRecord.dosimeter_id.in_([d.id for d in overdue])).group_by(DoseRecord.dosimeter_id)).all()
    ) if overdue else {}
    for dosimeter, period in overdue.items():
        if dosimeter.id in latest and latest[dosimeter.id] >= period[0]:
            continue
        days = (today - period[1]).days
        found.append(MissingResult(dosimeter.wearer, dosimeter, None, *period,
                                   f"no result {days} days after the wear period ended"))
    return sorted(found, key=lambda m: (m.end, m.person.name))
