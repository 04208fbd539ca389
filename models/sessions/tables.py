"""Instrument sessions: who ran which tube, when and at what settings."""
from __future__ import annotations

import enum
from datetime import datetime

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column, relationship

from models.core.base import Base, IdMixin, enum_column, utcnow
from models.doses.tables import Dosimeter
from models.instruments.tables import Instrument
from models.people.tables import Person


class EntrySource(enum.StrEnum):
    """Where a session entry came from."""

    FORM = "form"
    API = "api"
    IMPORT = "import"


class InstrumentSession(IdMixin, Base):
    """One period of use of an instrument by one operator."""

    __tablename__ = "instrument_session"

    instrument_id: Mapped[int] = mapped_column(sa.ForeignKey("instrument.id"), index=True)
    operator_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"), index=True)
    started_at: Mapped[datetime]
    ended_at: Mapped[datetime | None]
    kv: Mapped[float]
    ma: Mapped[float]
    beam_on_minutes: Mapped[float | None]
    purpose: Mapped[str] = mapped_column(sa.String(300), default="")
    configuration_changed: Mapped[bool] = mapped_column(default=False)
    configuration_change: Mapped[str | None] = mapped_column(sa.Text)
    alignment: Mapped[bool] = mapped_column(default=False)
    pre_use_checks_confirmed: Mapped[bool] = mapped_column(default=False)
    dosimeter_worn: Mapped[bool] = mapped_column(default=False)
    bypass_permit_id: Mapped[int | None] = mapped_column(sa.ForeignKey("bypass_permit.id"))
    # Who supervised the session, when the operator holds only a supervised authorisation.
    supervisor_id: Mapped[int | None] = mapped_column(sa.ForeignKey("person.id"))
    notes: Mapped[str | None] = mapped_column(sa.Text)
    source: Mapped[EntrySource] = mapped_column(enum_column(EntrySource), default=EntrySource.FORM)
    created_at: Mapped[datetime] = mapped_column(default=utcnow)

    instrument: Mapped[Instrument] = relationship()
    operator: Mapped[Person] = relationship(foreign_keys=[operator_id])
    supervisor: Mapped[Person | None] = relationship(foreign_keys=[supervisor_id])
    # Whole body and rings: a session under a permit or with alignment work may need several.
    dosimeters: Mapped[list[Dosimeter]] = relationship(
        secondary="session_dosimeter", order_by=Dosimeter.serial)

    # Sessions of one instrument never overlap: on PostgreSQL an exclusion constraint
    # (ex_instrument_session_no_overlap, migration 0015; Alembic's comparison does not see it) and
    # on SQLite BEGIN IMMEDIATE around session writes (models.core.database.hold_write_lock).
    __table_args__ = (
        sa.CheckConstraint("kv > 0", name="kv_positive"),
        sa.CheckConstraint("ma > 0", name="ma_positive"),
        sa.CheckConstraint("ended_at IS NULL OR ended_at >= started_at", name="end_after_start"),
        sa.CheckConstraint(
            "beam_on_minutes IS NULL OR beam_on_minutes >= 0", name="beam_on_not_negative"
        ),
        # The lists page newest first by (start, id): a page costs the same at any table size.
        sa.Index("ix_instrument_session_started_at_id", "started_at", "id"),
        sa.Index("ix_instrument_session_instrument_id_started_at", "instrument_id", "started_at"),
        # Only the sessions not ended yet, a handful among millions: open sessions and busy instruments.
        *(sa.Index(f"ix_instrument_session_open_{column}", column, sqlite_where=sa.text("ended_at IS NULL"),
                   postgresql_where=sa.text("ended_at IS NULL")) for column in ("instrument_id", "operator_id")),
    )

    @property
    def is_open(self) -> bool:
        """An open session has not been ended yet."""
        return self.ended_at is None


class SessionDosimeter(Base):
    """One dosimeter worn during one session."""

    __tablename__ = "session_dosimeter"

    session_id: Mapped[int] = mapped_column(sa.ForeignKey("instrument_session.id"), primary_key=True)
    dosimeter_id: Mapped[int] = mapped_column(sa.ForeignKey("dosimeter.id"), primary_key=True,
                                              index=True)
