"""What a person did during an investigation's window: sessions, bypass permits, incidents."""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date
from zoneinfo import ZoneInfo

import sqlalchemy as sa
from sqlalchemy.orm import Session, selectinload

from models.core.codes import PeriodKind
from models.core.settings import lab_days
from models.exposure.periods import period_bounds
from models.exposure.tables import Investigation
from models.incidents.tables import Incident
from models.people.tables import Person
from models.sessions.tables import InstrumentSession
from models.surveys.tables import BypassPermit

# Windows whose end is fixed by the calendar; the others end on the day the level was crossed.
_CALENDAR = {PeriodKind.YEAR, PeriodKind.QUARTER, PeriodKind.MONTH, PeriodKind.FIVE_YEAR_BLOCK}


@dataclass(frozen=True)
class InvestigationContext:
    """The facts of the window an investigation looks at, for the review to start from."""

    first: date
    last: date
    sessions: list[InstrumentSession]
    permits: list[BypassPermit]
    incidents: list[Incident]


def context_window(investigation: Investigation, raised_on: date, first_block_year: int) -> tuple[date, date]:
    """First and last day (inclusive): the window's start to the later of its end and the day raised."""
    first = investigation.period_start
    if investigation.period in _CALENDAR:
        _, end = period_bounds(investigation.period, first, first_block_year)
        return first, max(end, raised_on)
    return first, raised_on


def investigation_context(session: Session, investigation: Investigation, zone: ZoneInfo,
                          first_block_year: int) -> InvestigationContext:
    """The person's sessions, their permits and the incidents naming them, within the window."""
    first, last = context_window(investigation, investigation.raised_at.astimezone(zone).date(),
                                 first_block_year)
    start, end = lab_days(first, last, zone)
    person_id = investigation.person_id
    sessions = session.scalars(
        sa.select(InstrumentSession).options(selectinload(InstrumentSession.instrument))
        .where(InstrumentSession.operator_id == person_id, InstrumentSession.started_at < end,
               sa.or_(InstrumentSession.ended_at.is_(None), InstrumentSession.ended_at >= start))
        .order_by(InstrumentSession.started_at)).all()
    permits = session.scalars(
        sa.select(BypassPermit).where(BypassPermit.requested_by_id == person_id,
                                      BypassPermit.window_start < end, BypassPermit.window_end >= start)
        .order_by(BypassPermit.window_start)).all()
    incidents = session.scalars(
        sa.select(Incident).where(
            sa.or_(Incident.reported_by_id == person_id, Incident.people.any(Person.id == person_id)),
            Incident.occurred_at >= start, Incident.occurred_at < end)
        .order_by(Incident.occurred_at)).all()
    return InvestigationContext(first, last, list(sessions), list(permits), list(incidents))
