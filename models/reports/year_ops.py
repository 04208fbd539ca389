"""Figures of one calendar year across the lab: people, collective dose, bands, instruments."""
from __future__ import annotations

from collections import Counter
from dataclasses import dataclass
from datetime import date, datetime, timedelta
from zoneinfo import ZoneInfo

import numpy as np
import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.audit.tables import AuditEvent
from models.checks.tables import SafetyCheck
from models.core.codes import Location, PeriodKind, Quantity, Result, Series, WorkerCategory, code
from models.core.settings import lab_days
from models.doses.tables import DoseRecord
from models.exposure.lab_ops import LabEvaluation
from models.exposure.tables import Investigation
from models.incidents.tables import Incident
from models.instruments import tube
from models.instruments.tables import Instrument
from models.people.tables import Person
from models.sessions.tables import InstrumentSession
from models.surveys.tables import Survey

# Upper edges of the annual Hp(10) bands, mSv: where the limit sets change duties (1 mSv public
# limit and monitoring threshold, 6 mSv category A, 20 mSv annual limit).
BAND_EDGES_MSV = (1.0, 6.0, 20.0)
BAND_NAMES = ("below the minimum reportable dose", "up to 1 mSv", "over 1 to 6 mSv",
              "over 6 to 20 mSv", "over 20 mSv")
NO_DOSE_RESULTS = (Result.BELOW_MRD, Result.UNUSED)


def people_monitored(session: Session, year: int) -> list[Person]:
    """Everyone with a dose record worn during the year, by name."""
    worn = sa.select(DoseRecord.person_id).where(
        DoseRecord.wear_start <= date(year, 12, 31), DoseRecord.wear_end >= date(year, 1, 1))
    return list(session.scalars(sa.select(Person).where(Person.id.in_(worn)).order_by(Person.name)))


def dose_band(annual_msv: float, all_below_mrd: bool) -> int:
    """Index into BAND_NAMES: 0 when no result of the year rose above the MRD, else by the edges."""
    if all_below_mrd:
        return 0
    return 1 + int(np.searchsorted(BAND_EDGES_MSV, annual_msv, side="left"))


@dataclass(frozen=True)
class InstrumentYear:
    """One instrument's year."""

    name: str
    sessions: int
    beam_hours: float
    energy_kwh: float
    kv_range: tuple[float, float] | None
    ma_range: tuple[float, float] | None
    alignment_sessions: int
    permit_sessions: int
    checks: int
    checks_late: int
    checks_failed: int
    surveys: int
    worst_survey: tuple[float, float] | None  # (highest net reading, its action level), uSv/h
    out_of_service: list[tuple[date, date | None]]
    incidents: int


@dataclass(frozen=True)
class LabYear:
    """The lab's year in figures."""

    year: int
    on: date
    people_by_category: dict[WorkerCategory, int]
    collective_msv: dict[Series, float]
    bands: list[int]
    highest_hp10_msv: float | None
    investigations_raised: int
    investigations_closed: int
    instruments: list[InstrumentYear]


def _bounds(year: int, zone: ZoneInfo) -> tuple[datetime, datetime]:
    return lab_days(date(year, 1, 1), date(year, 12, 31), zone)


def _below_mrd_only(session: Session, year: int, person_ids: list[int]) -> set[int]:
    """People none of whose Hp(10) whole-body results of the year (current versions) rose above the MRD."""
    replaced = sa.select(DoseRecord.supersedes_id).where(DoseRecord.supersedes_id.is_not(None))
    rows = session.execute(
        sa.select(DoseRecord.person_id, DoseRecord.result).where(
            DoseRecord.person_id.in_(person_ids), DoseRecord.quantity == Quantity.HP10,
            DoseRecord.location == Location.WHOLE_BODY, DoseRecord.id.not_in(replaced),
            DoseRecord.wear_start <= date(year, 12, 31), DoseRecord.wear_end >= date(year, 1, 1))).all()
    some_dose = {p for p, result in rows if result not in NO_DOSE_RESULTS}
    return {p for p, _ in rows} - some_dose


def _check_lateness(checks: list[SafetyCheck], interval_days: int, start: datetime) -> int:
    """Checks of the year done more than the interval after the last passing check before them."""
    late, last_pass = 0, None
    for check in checks:
        if check.performed_at >= start and last_pass is not None and \
                check.performed_at - last_pass > timedelta(days=interval_days):
            late += 1
        if check.passed:
            last_pass = check.performed_at
    return late


def service_history(session: Session, instrument_id: int, zone: ZoneInfo) -> list[tuple[date, date | None]]:
    """Out-of-service periods (first day, day returned or None), read from the instrument's audit trail."""
    events = session.execute(
        sa.select(AuditEvent.at, AuditEvent.after).where(
            AuditEvent.entity == "instrument", AuditEvent.entity_id == instrument_id)
        .order_by(AuditEvent.id)).all()
    periods, since = [], None
    for at, after in events:
        if not after or "in_service" not in after:
            continue
        if after["in_service"] is False and since is None:
            # The hold dates from the event that caused it (a check, a survey), not from its entry.
            held = after.get("out_of_service_since")
            since = (datetime.fromisoformat(held) if held else at).astimezone(zone).date()
        elif after["in_service"] is True and since is not None:
            periods.append((since, at.astimezone(zone).date()))
            since = None
    if since is not None:
        periods.append((since, None))
    return periods


def _instrument_year(session: Session, instrument: Instrument, year: int, zone: ZoneInfo) -> InstrumentYear:
    start, end = _bounds(year, zone)
    s = InstrumentSession
    sessions = session.execute(sa.select(s.kv, s.ma, s.beam_on_minutes, s.alignment, s.bypass_permit_id)
                               .where(s.instrument_id == instrument.id, s.started_at >= start,
                                      s.started_at < end)).all()
    ended = [r for r in sessions if r.beam_on_minutes is not None]
    hours, kwh = (tube.tube_usage([r.kv for r in ended], [r.ma for r in ended],
                                  [r.beam_on_minutes for r in ended]) if ended else (0.0, 0.0))
    checks = list(session.scalars(sa.select(SafetyCheck).where(
        SafetyCheck.instrument_id == instrument.id, SafetyCheck.performed_at < end)
        .order_by(SafetyCheck.performed_at)))
    of_year = [c for c in checks if c.performed_at >= start]
    surveys = session.execute(sa.select(Survey.max_net_usv_h, Survey.action_level_usv_h).where(
        Survey.instrument_id == instrument.id, Survey.performed_at >= start, Survey.performed_at < end)).all()
    incidents = session.scalar(sa.select(sa.func.count()).select_from(Incident).where(
        Incident.instrument_id == instrument.id, Incident.occurred_at >= start, Incident.occurred_at < end))
    return InstrumentYear(
        instrument.name, len(sessions), hours, kwh,
        (min(r.kv for r in sessions), max(r.kv for r in sessions)) if sessions else None,
        (min(r.ma for r in sessions), max(r.ma for r in sessions)) if sessions else None,
        sum(1 for r in sessions if r.alignment), sum(1 for r in sessions if r.bypass_permit_id),
        len(of_year), _check_lateness(checks, instrument.check_interval_days, start),
        sum(1 for c in of_year if not c.passed), len(surveys),
        max(((r.max_net_usv_h, r.action_level_usv_h) for r in surveys), default=None),
        [(a, b) for a, b in service_history(session, instrument.id, zone)
         if a <= date(year, 12, 31) and (b is None or b >= date(year, 1, 1))], incidents or 0)


def lab_year(session: Session, year: int, lab: LabEvaluation, zone: ZoneInfo) -> LabYear:
    """The year's figures; dose figures from the lab's evaluation on 31 December (or today)."""
    people = people_monitored(session, year)
    ids = [p.id for p in people]
    by_category = Counter(p.category for p in people)
    rows = np.array([lab.row_of(i) for i in ids], dtype=np.int64)
    year_doses = lab.totals.dose[:, :, code(PeriodKind.YEAR)][rows] if len(rows) else np.zeros((0, len(Series)))
    collective = {s: float(np.nansum(year_doses[:, code(s)])) for s in Series if s is not Series.FETUS}
    hp10 = year_doses[:, code(Series.EFFECTIVE)] if len(rows) else np.zeros(0)
    quiet = _below_mrd_only(session, year, ids)
    bands = [0] * len(BAND_NAMES)
    for person_id, dose in zip(ids, np.nan_to_num(hp10), strict=True):
        bands[dose_band(float(dose), person_id in quiet)] += 1
    start, end = _bounds(year, zone)
    raised = session.scalar(sa.select(sa.func.count()).select_from(Investigation).where(
        Investigation.raised_at >= start, Investigation.raised_at < end)) or 0
    closed = session.scalar(sa.select(sa.func.count()).select_from(Investigation).where(
        Investigation.signed_off_at >= start, Investigation.signed_off_at < end)) or 0
    in_use = session.scalars(sa.select(Instrument).where(
        sa.or_(Instrument.retired_at.is_(None), Instrument.retired_at >= start)).order_by(Instrument.name))
    return LabYear(year, lab.on, dict(by_category), collective, bands,
                   float(np.nanmax(hp10)) if len(hp10) else None, raised, closed,
                   [_instrument_year(session, i, year, zone) for i in in_use])
