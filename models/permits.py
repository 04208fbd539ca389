"""Bypass permits: time-boxed, approved defeat of a safety device."""
from __future__ import annotations

import enum
from datetime import datetime

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column, relationship

from models.base import Base, IdMixin, enum_column, utcnow
from models.instruments import Instrument
from models.people import Person


class PermitStatus(enum.StrEnum):
    """Where a bypass permit stands; 'active' is derived from the window."""

    REQUESTED = "requested"
    APPROVED = "approved"
    REFUSED = "refused"
    CLOSED = "closed"


class BypassPermit(IdMixin, Base):
    """A request, and the safety officer's approval, to defeat safety devices for a window."""

    __tablename__ = "bypass_permit"

    instrument_id: Mapped[int] = mapped_column(sa.ForeignKey("instrument.id"), index=True)
    devices: Mapped[str] = mapped_column(sa.Text)
    reason: Mapped[str] = mapped_column(sa.Text)
    requested_by_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"))
    requested_at: Mapped[datetime] = mapped_column(default=utcnow)
    window_start: Mapped[datetime]
    window_end: Mapped[datetime]
    ring_dosimetry_confirmed: Mapped[bool] = mapped_column(default=False)
    status: Mapped[PermitStatus] = mapped_column(
        enum_column(PermitStatus), default=PermitStatus.REQUESTED
    )
    decided_by_id: Mapped[int | None] = mapped_column(sa.ForeignKey("person.id"))
    decided_at: Mapped[datetime | None]
    decision_note: Mapped[str | None] = mapped_column(sa.Text)
    closed_by_id: Mapped[int | None] = mapped_column(sa.ForeignKey("person.id"))
    closed_at: Mapped[datetime | None]

    instrument: Mapped[Instrument] = relationship()
    requested_by: Mapped[Person] = relationship(foreign_keys=[requested_by_id])
    decided_by: Mapped[Person | None] = relationship(foreign_keys=[decided_by_id])

    __table_args__ = (sa.CheckConstraint("window_end > window_start", name="window_ordered"),)
