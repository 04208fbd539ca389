"""An instrument's file for an inspection: everything the logbook holds on it for a period."""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from zoneinfo import ZoneInfo

import sqlalchemy as sa
from sqlalchemy.orm import Session, selectinload

from models.checks.tables import SafetyCheck
from models.core.settings import lab_days
from models.incidents.tables import Incident
from models.instruments.tables import Authorisation, Instrument
from models.reports.year_ops import service_history
from models.sessions.tables import InstrumentSession
from models.surveys.tables import BypassPermit, Survey, SurveyTask


@dataclass(frozen=True)
class InstrumentFile:
    """The records of one instrument from `first` to `last` (lab dates, inclusive)."""

    instrument: Instrument
    first: date
    last: date
    authorisations: list[Authorisation]
    sessions: list[InstrumentSession]
    checks: list[SafetyCheck]
    surveys: list[Survey]
    permits: list[tuple[BypassPermit, list[Survey]]]
    incidents: list[Incident]
    out_of_service: list[tuple[date, date | None]]


def instrument_file(session: Session, instrument: Instrument, first: date, last: date,
                    zone: ZoneInfo) -> InstrumentFile:
    """Everything about the instrument in the period; authorisations in force at any time in it."""
    start, end = lab_days(first, last, zone)
    of = instrument.id
    authorisations = session.scalars(
        sa.select(Authorisation).options(selectinload(Authorisation.person))
        .where(Authorisation.instrument_id == of, Authorisation.granted_at < end,
               sa.or_(Authorisation.revoked_at.is_(None), Authorisation.revoked_at >= start))
        .order_by(Authorisation.granted_at)).all()
    sessions = session.scalars(
        sa.select(InstrumentSession).options(selectinload(InstrumentSession.operator))
        .where(InstrumentSession.instrument_id == of, InstrumentSession.started_at >= start,
               InstrumentSession.started_at < end).order_by(InstrumentSession.started_at)).all()
    checks = session.scalars(
        sa.select(SafetyCheck).options(selectinload(SafetyCheck.results), selectinload(SafetyCheck.performed_by))
        .where(SafetyCheck.instrument_id == of, SafetyCheck.performed_at >= start,
               SafetyCheck.performed_at < end).order_by(SafetyCheck.performed_at)).all()
    surveys = session.scalars(
        sa.select(Survey).options(selectinload(Survey.points), selectinload(Survey.meter))
        .where(Survey.instrument_id == of, Survey.performed_at >= start, Survey.performed_at < end)
        .order_by(Survey.performed_at)).all()
    permits = session.scalars(
        sa.select(BypassPermit).where(BypassPermit.instrument_id == of, BypassPermit.window_start < end,
                                      BypassPermit.window_end >= start)
        .order_by(BypassPermit.window_start)).all()
    closing = {}
    for task in session.scalars(sa.select(SurveyTask).where(
            SurveyTask.bypass_permit_id.in_([p.id for p in permits]), SurveyTask.survey_id.is_not(None))):
        closing.setdefault(task.bypass_permit_id, []).append(session.get(Survey, task.survey_id))
    incidents = session.scalars(
        sa.select(Incident).where(Incident.instrument_id == of, Incident.occurred_at >= start,
                                  Incident.occurred_at < end).order_by(Incident.occurred_at)).all()
    history = [(a, b) for a, b in service_history(session, of, zone)
               if a <= last and (b is None or b >= first)]
    return InstrumentFile(instrument, first, last, list(authorisations), list(sessions), list(checks),
                          list(surveys), [(p, closing.get(p.id, [])) for p in permits], list(incidents), history)
