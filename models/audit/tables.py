"""Hash-chained audit trail written automatically for every flushed change."""
from __future__ import annotations

from datetime import datetime

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column

from models.core.base import Base, IdMixin


class AuditEvent(IdMixin, Base):
    """Who changed what, when, with the row before and after and the reason given."""

    __tablename__ = "audit_event"

    at: Mapped[datetime]
    actor_id: Mapped[int | None] = mapped_column(index=True)
    entity: Mapped[str] = mapped_column(sa.String(64))
    entity_id: Mapped[int | None]
    action: Mapped[str] = mapped_column(sa.String(16))
    before: Mapped[dict | None] = mapped_column(sa.JSON)
    after: Mapped[dict | None] = mapped_column(sa.JSON)
    reason: Mapped[str | None] = mapped_column(sa.Text)
    prev_hash: Mapped[str] = mapped_column(sa.String(64))
    hash: Mapped[str] = mapped_column(sa.String(64))

    # One record type's events in order, from the index alone (the audit list's filter, a record's history).
    __table_args__ = (sa.Index("ix_audit_event_entity_id", "entity", "id"),)
