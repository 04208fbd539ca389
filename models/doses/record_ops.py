"""Dose records: entry, checks, and correction by a new version.

A dose record is never edited or deleted: a correction is a new row that supersedes the one
before it (version + 1, with a reason). The current record of a chain is the one nobody
supersedes; every summary counts only current records.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, fields, replace
from datetime import date

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.base import utcnow
from models.core.codes import SOURCES, Location, Quantity, Result
from models.core.errors import Invalid
from models.core.settings import lab_date
from models.core.units import DOSE_UNITS, from_msv, to_msv
from models.doses.dosimeter_ops import describe_dosimeter, location_of
from models.doses.tables import DoseRecord, DoseSource, Dosimeter
from models.doses.version_ops import is_current, successor_of
from models.people.tables import Person

# The (quantity, location) pairs a record may carry: exactly the pairs the dose engine counts.
ALLOWED_PAIRS: frozenset[tuple[Quantity, Location]] = frozenset(SOURCES)
PAIRS_HELP = ("Hp(10) or Hp(0.07) for the whole body, Hp(0.07) for a hand, Hp(3) for the eye, "
              "Hp(10) for the abdomen")

# Results that carry no reading at all.
NO_READING = (Result.LOST, Result.NOT_RETURNED)
ESTIMATES = (DoseSource.RSO_ESTIMATE, DoseSource.INCIDENT_ESTIMATE)

def unit_of(text: str | None) -> str | None:
    """The unit as the logbook spells it ('mSv' or 'mrem'), or None when unknown."""
    lowered = (text or "").strip().lower()
    return next((u for u in DOSE_UNITS if u.lower() == lowered), None)


@dataclass(frozen=True)
class DoseEntry:
    """A dose record as entered: the value and MRD in the entered unit, not yet in mSv."""

    person_id: int | None
    wear_start: date | None
    wear_end: date | None
    quantity: Quantity
    location: Location
    result: Result
    value: float | None = None
    unit: str = "mSv"
    mrd: float | None = None
    source: DoseSource = DoseSource.DOSIMETRY_REPORT
    basis: str | None = None
    dosimeter_id: int | None = None

    @property
    def key(self) -> tuple:
        """What makes two records the same result: person, quantity, location and wear period."""
        return (self.person_id, self.quantity, self.location, self.wear_start, self.wear_end)


def _amount(value: float, unit: str) -> str:
    """A value with its unit, for messages."""
    return f"{value:g} {unit}"


# Wear dates outside these cannot be right for this logbook (and would distort every period sum).
EARLIEST_WEAR, LATEST_WEAR = date(1950, 1, 1), date(2100, 12, 31)


def _wear_date_errors(entry: DoseEntry, today: date | None) -> dict[str, str]:
    """Wear dates present, in order, within EARLIEST_WEAR..LATEST_WEAR, and not ending after today."""
    errors: dict[str, str] = {}
    for name, day, what in (("wear_start", entry.wear_start, "first"), ("wear_end", entry.wear_end, "last")):
        if day is None:
            errors[name] = f"Enter the {what} day of the wear period."
        elif not EARLIEST_WEAR <= day <= LATEST_WEAR:
            errors[name] = f"{day} is outside {EARLIEST_WEAR.year}-{LATEST_WEAR.year}: check the date."
    if errors:
        return errors
    if entry.wear_end < entry.wear_start:
        errors["wear_end"] = (f"The wear period ends on {entry.wear_end} before it starts on "
                              f"{entry.wear_start}.")
    elif today is not None and entry.wear_end > today:
        errors["wear_end"] = (f"The wear period ends on {entry.wear_end}, after today ({today}) in the "
                              "lab's time zone: a result cannot cover days not yet worn.")
    return errors


def entry_errors(entry: DoseEntry, dosimeter: Dosimeter | None = None, today: date | None = None) -> dict[str, str]:
    """Every rule a dose entry breaks, by field; `dosimeter` is the entry's dosimeter if it has one,
    `today` the lab's date (wear periods may not end after it)."""
    errors: dict[str, str] = {}
    if entry.person_id is None:
        errors["person"] = "Choose whose dose this is."
    errors.update(_wear_date_errors(entry, today))
    if (entry.quantity, entry.location) not in ALLOWED_PAIRS:
        errors["location"] = (f"{entry.quantity.value} is not recorded at {entry.location.value.replace('_', ' ')}: "
                              f"use {PAIRS_HELP}.")
    if entry.unit not in DOSE_UNITS:
        errors["unit"] = f"Unknown unit '{entry.unit}': use mSv or mrem."
    for name in ("value", "mrd"):
        number = getattr(entry, name)
        if number is not None and not math.isfinite(number):
            errors[name] = "Enter a number."
        elif number is not None and number < 0:
            what = "A dose" if name == "value" else "A minimum reportable dose"
            errors[name] = f"{what} cannot be negative ({_amount(number, entry.unit)})."
    if "value" not in errors:
        errors.update(_result_errors(entry))
    if entry.source in ESTIMATES and not (entry.basis or "").strip():
        errors["basis"] = "An estimate needs its written basis: how the dose was worked out."
    if dosimeter is not None:
        errors.update(_dosimeter_errors(entry, dosimeter))
    return errors


def _result_errors(entry: DoseEntry) -> dict[str, str]:
    """Rules tying the value and the MRD to the result status."""
    result, value = entry.result, entry.value
    if result is Result.MEASURED and value is None:
        return {"value": "A measured result needs its value."}
    if result is Result.BELOW_MRD:
        if entry.mrd is None:
            return {"mrd": "A result below the minimum reportable dose needs that minimum "
                           "reportable dose (MRD)."}
        if value is not None and value > entry.mrd:
            return {"value": f"{_amount(value, entry.unit)} is above the MRD of "
                             f"{_amount(entry.mrd, entry.unit)}: record it as measured."}
    if result is Result.UNUSED and value:
        return {"value": "An unused dosimeter has no dose: leave the value empty."}
    if result in NO_READING and value is not None:
        return {"value": f"A {result.value.replace('_', ' ')} dosimeter has no reading: leave the value "
                         "empty, and enter the safety officer's estimate later as a correction "
                         "with its basis."}
    return {}


def _dosimeter_errors(entry: DoseEntry, dosimeter: Dosimeter) -> dict[str, str]:
    """A record must belong to the dosimeter's wearer and to where the dosimeter is worn."""
    if entry.person_id is not None and dosimeter.wearer_id != entry.person_id:
        return {"dosimeter": f"Dosimeter {dosimeter.serial} is issued to {dosimeter.wearer.name}, "
                             "not to this person."}
    where = location_of(dosimeter)
    if entry.location is not where:
        return {"location": f"Dosimeter {dosimeter.serial} is a {describe_dosimeter(dosimeter)} "
                            f"dosimeter: its results are at {where.value.replace('_', ' ')}."}
    return {}


def existing_current_keys(session: Session, person_ids) -> dict[tuple, int]:
    """(person, quantity, location, wear start, wear end) -> id of the current record, for these people."""
    ids = list(person_ids)
    if not ids:
        return {}
    rows = session.execute(
        sa.select(DoseRecord.person_id, DoseRecord.quantity, DoseRecord.location,
                  DoseRecord.wear_start, DoseRecord.wear_end, DoseRecord.id)
        .where(is_current(), DoseRecord.person_id.in_(ids)))
    return {tuple(row[:5]): row[5] for row in rows}


def current_keys_among(session: Session, keys: set[tuple]) -> dict[tuple, int]:
    """Key -> id of the current record, for those of these keys that have one.

    One query for a whole chunk of keys: narrowed by person and both ends of the wear period.
    """
    if not keys:
        return {}
    people, starts, ends = ({k[i] for k in keys} for i in (0, 3, 4))
    rows = session.execute(
        sa.select(DoseRecord.person_id, DoseRecord.quantity, DoseRecord.location,
                  DoseRecord.wear_start, DoseRecord.wear_end, DoseRecord.id)
        .where(is_current(), DoseRecord.person_id.in_(people), DoseRecord.wear_start.in_(starts),
               DoseRecord.wear_end.in_(ends)))
    return {key: row[5] for row in rows if (key := tuple(row[:5])) in keys}


def duplicate_message(record_id: int) -> str:
    """Why a record repeating a current one is refused."""
    return (f"A current record (#{record_id}) already exists for this person, quantity, location "
            "and wear period: correct that one instead.")


def dosimeter_periods(session: Session, dosimeter_ids) -> dict[tuple, list[tuple[date, date, int]]]:
    """(dosimeter id, quantity) -> [(wear start, wear end, record id)] of the current records."""
    ids = sorted(set(dosimeter_ids) - {None})
    periods: dict[tuple, list] = {}
    if ids:
        for dosimeter_id, quantity, start, end, record_id in session.execute(
                sa.select(DoseRecord.dosimeter_id, DoseRecord.quantity, DoseRecord.wear_start,
                          DoseRecord.wear_end, DoseRecord.id)
                .where(is_current(), DoseRecord.dosimeter_id.in_(ids))):
            periods.setdefault((dosimeter_id, quantity), []).append((start, end, record_id))
    return periods


def overlap_message(entry: DoseEntry, periods: dict[tuple, list], replacing_id: int | None = None) -> str | None:
    """Why an entry's wear period cannot be right: its dosimeter already has a result for some of
    those days (a correction of that very record aside); None when it has not."""
    for start, end, record_id in periods.get((entry.dosimeter_id, entry.quantity), []):
        if record_id != replacing_id and start <= entry.wear_end and entry.wear_start <= end:
            where = f"record #{record_id}" if record_id else "another line of this file"
            return (f"This dosimeter already has a {entry.quantity.value} result for {start} to {end} "
                    f"({where}), which overlaps this wear period: correct that record instead.")
    return None


def validate_entry(session: Session, entry: DoseEntry, *, replacing: DoseRecord | None = None) -> None:
    """Refuse an entry that breaks a rule, repeats a current record (other than the one replaced),
    or overlaps another wear period of its dosimeter."""
    dosimeter = session.get(Dosimeter, entry.dosimeter_id) if entry.dosimeter_id else None
    errors = entry_errors(entry, dosimeter, lab_date(session, utcnow()))
    if entry.dosimeter_id and dosimeter is None:
        errors["dosimeter"] = "There is no such dosimeter."
    if entry.person_id is not None and session.get(Person, entry.person_id) is None:
        errors["person"] = "There is no such person."
    if not errors:
        twin = existing_current_keys(session, [entry.person_id]).get(entry.key)
        if twin is not None and (replacing is None or twin != replacing.id):
            errors["wear_start"] = duplicate_message(twin)
        elif entry.dosimeter_id:
            overlap = overlap_message(entry, dosimeter_periods(session, [entry.dosimeter_id]),
                                      replacing.id if replacing else None)
            if overlap:
                errors["wear_start"] = overlap
    if errors:
        raise Invalid(errors)


def record_values(entry: DoseEntry, **extra) -> dict:
    """The column values of a new record for a checked entry, the value and MRD converted to mSv."""
    estimate = entry.source in ESTIMATES
    return dict(
        person_id=entry.person_id, dosimeter_id=entry.dosimeter_id, wear_start=entry.wear_start,
        wear_end=entry.wear_end, quantity=entry.quantity, location=entry.location,
        value_msv=to_msv(entry.value, entry.unit), result=entry.result,
        mrd_msv=to_msv(entry.mrd, entry.unit), source=entry.source,
        basis=(entry.basis or "").strip() or None if estimate else None,
        entered_unit=entry.unit, **extra)


def record_from(entry: DoseEntry, **extra) -> DoseRecord:
    """A new DoseRecord row for a checked entry, the value and MRD converted to mSv."""
    return DoseRecord(**record_values(entry, **extra))


def add_dose_record(session: Session, entry: DoseEntry, *, created_by_id: int | None = None,
                    incident_id: int | None = None) -> DoseRecord:
    """Record a new dose result (version 1)."""
    validate_entry(session, entry)
    record = record_from(entry, created_by_id=created_by_id, incident_id=incident_id)
    session.add(record)
    session.flush()
    return record


def entry_of(record: DoseRecord) -> DoseEntry:
    """A record's content as an entry, in the unit it was entered in."""
    def back(value_msv):
        shown = from_msv(value_msv, record.entered_unit)
        return None if shown is None else round(shown, 9)

    return DoseEntry(
        person_id=record.person_id, wear_start=record.wear_start, wear_end=record.wear_end,
        quantity=record.quantity, location=record.location, result=record.result,
        value=back(record.value_msv), unit=record.entered_unit, mrd=back(record.mrd_msv),
        source=record.source, basis=record.basis, dosimeter_id=record.dosimeter_id)


def validate_amendment(session: Session, record: DoseRecord, entry: DoseEntry, reason: str | None) -> None:
    """Refuse a correction of a superseded version, one without a reason, or one that changes nothing."""
    newer = successor_of(session, record)
    if newer is not None:
        raise Invalid.one("reason", f"Version {record.version} was already corrected by version "
                                    f"{newer.version}: correct the latest version.")
    errors = {}
    if not (reason or "").strip():
        errors["reason"] = "Say why the record is corrected."
    if entry.person_id != record.person_id:
        errors["person"] = "A correction keeps the record's person."
    if not errors and _same(entry, entry_of(record)):
        errors["reason"] = "Nothing was changed: a correction must change something."
    try:
        validate_entry(session, entry, replacing=record)
    except Invalid as error:
        errors = {**error.errors, **errors}
    if errors:
        raise Invalid(errors)


def amend_dose_record(session: Session, record: DoseRecord, entry: DoseEntry, reason: str | None,
                      *, created_by_id: int | None = None) -> DoseRecord:
    """Correct a record by a new version that supersedes it; the record itself stays as it was."""
    validate_amendment(session, record, entry, reason)
    version = record_from(entry, supersedes_id=record.id, version=record.version + 1,
                          reason=reason.strip(), created_by_id=created_by_id,
                          incident_id=record.incident_id)
    session.add(version)
    session.flush()
    return version


def _same(a: DoseEntry, b: DoseEntry) -> bool:
    """True when two entries say the same thing (a blank basis equals none)."""
    def plain(e: DoseEntry) -> DoseEntry:
        """The entry with the basis as it would be stored."""
        return replace(e, basis=(e.basis or "").strip() or None if e.source in ESTIMATES else None)

    a, b = plain(a), plain(b)
    return all(getattr(a, f.name) == getattr(b, f.name) for f in fields(DoseEntry))
