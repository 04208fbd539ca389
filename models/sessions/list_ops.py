"""The sessions list one page at a time, newest first, by keyset, so page cost stays flat."""
from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

import sqlalchemy as sa
from sqlalchemy.orm import Session, selectinload

from models.sessions.session_ops import Usage, usage
from models.sessions.tables import InstrumentSession

PAGE_SIZE = 100


@dataclass(frozen=True)
class SessionFilter:
    """Which sessions a list shows: an instrument, an operator, and those touching [start, end)."""

    instrument_id: int | None = None
    operator_id: int | None = None
    start: datetime | None = None
    end: datetime | None = None


@dataclass(frozen=True)
class SessionPage:
    """One page of the list and the key that opens the next one (None on the last page)."""

    rows: list[InstrumentSession]
    next_key: tuple[datetime, int] | None


def _conditions(chosen: SessionFilter) -> list[sa.ColumnElement]:
    """The filter as SQL conditions."""
    s = InstrumentSession
    conditions = []
    if chosen.instrument_id is not None:
        conditions.append(s.instrument_id == chosen.instrument_id)
    if chosen.operator_id is not None:
        conditions.append(s.operator_id == chosen.operator_id)
    if chosen.start is not None:
        conditions.append(sa.or_(s.ended_at.is_(None), s.ended_at > chosen.start))
    if chosen.end is not None:
        conditions.append(s.started_at < chosen.end)
    return conditions


def session_page(session: Session, chosen: SessionFilter, before: tuple[datetime, int] | None = None,
                 size: int = PAGE_SIZE) -> SessionPage:
    """The sessions after the key `before` (newest first), at most `size` of them."""
    s = InstrumentSession
    query = (sa.select(s).options(selectinload(s.instrument), selectinload(s.operator))
             .where(*_conditions(chosen)))
    if before is not None:
        # A row-value comparison walks the (started_at, id) index straight to the key.
        query = query.where(sa.tuple_(s.started_at, s.id) < sa.tuple_(*before))
    rows = list(session.scalars(query.order_by(s.started_at.desc(), s.id.desc()).limit(size + 1)))
    more = len(rows) > size
    rows = rows[:size]
    return SessionPage(rows, (rows[-1].started_at, rows[-1].id) if more and rows else None)


def filtered_usage(session: Session, chosen: SessionFilter) -> Usage:
    """Count, beam hours and kWh of every session the filter keeps (open ones have no beam time)."""
    s = InstrumentSession
    return usage(session.execute(sa.select(s.kv, s.ma, s.beam_on_minutes)
                                 .where(*_conditions(chosen))).all())
