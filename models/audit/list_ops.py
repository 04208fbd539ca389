"""The audit trail one page at a time, newest first, by keyset, with its filters."""
from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.audit.tables import AuditEvent

PAGE_SIZE = 100


@dataclass(frozen=True)
class EventFilter:
    """Which events to show: a record type, who acted, when [start, end), and types kept back."""

    entity: str | None = None
    actor_id: int | None = None
    start: datetime | None = None
    end: datetime | None = None
    hidden: frozenset[str] = frozenset()


def event_page(session: Session, chosen: EventFilter, before_id: int | None = None,
               size: int = PAGE_SIZE) -> tuple[list[AuditEvent], int | None]:
    """Events older than `before_id`, newest first, and the id that opens the next page."""
    e = AuditEvent
    query = sa.select(e)
    if chosen.entity:
        query = query.where(e.entity == chosen.entity)
    if chosen.actor_id is not None:
        query = query.where(e.actor_id == chosen.actor_id)
    if chosen.start is not None:
        query = query.where(e.at >= chosen.start)
    if chosen.end is not None:
        query = query.where(e.at < chosen.end)
    if chosen.hidden:
        query = query.where(e.entity.not_in(chosen.hidden))
    if before_id is not None:
        query = query.where(e.id < before_id)
    events = list(session.scalars(query.order_by(e.id.desc()).limit(size + 1)))
    more = len(events) > size
    events = events[:size]
    return events, (events[-1].id if more and events else None)
