"""Incidents: suspected exposures, faults and near misses, with their follow-up."""
from __future__ import annotations

import enum
from datetime import datetime

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column, relationship

from models.core.base import Base, IdMixin, enum_column, utcnow
from models.instruments.tables import Instrument
from models.people.tables import Person


class IncidentType(enum.StrEnum):
    """What kind of event was reported."""

    SUSPECTED_EXPOSURE = "suspected_exposure"
    EQUIPMENT_FAULT = "equipment_fault"
    WARNING_LIGHT_FAILURE = "warning_light_failure"
    NEAR_MISS = "near_miss"
    OTHER = "other"


incident_person = sa.Table(
    "incident_person",
    Base.metadata,
    sa.Column("incident_id", sa.ForeignKey("incident.id"), primary_key=True),
    sa.Column("person_id", sa.ForeignKey("person.id"), primary_key=True),
)


class Incident(IdMixin, Base):
    """A reported event that the safety officer must look at."""

    __tablename__ = "incident"

    occurred_at: Mapped[datetime]
    instrument_id: Mapped[int | None] = mapped_column(sa.ForeignKey("instrument.id"))
    type: Mapped[IncidentType] = mapped_column(enum_column(IncidentType))
    description: Mapped[str] = mapped_column(sa.Text)
    immediate_actions: Mapped[str] = mapped_column(sa.Text, default="")
    reported_by_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"))
    reported_at: Mapped[datetime] = mapped_column(default=utcnow)
    closed_at: Mapped[datetime | None]
    closed_by_id: Mapped[int | None] = mapped_column(sa.ForeignKey("person.id"))
    closing_note: Mapped[str | None] = mapped_column(sa.Text)

    instrument: Mapped[Instrument | None] = relationship()
    reported_by: Mapped[Person] = relationship(foreign_keys=[reported_by_id])
    people: Mapped[list[Person]] = relationship(secondary=incident_person)
    notes: Mapped[list[IncidentNote]] = relationship(
        back_populates="incident", order_by="IncidentNote.id"
    )


class IncidentNote(IdMixin, Base):
    """A dated note added during the follow-up of an incident."""

    __tablename__ = "incident_note"

    incident_id: Mapped[int] = mapped_column(sa.ForeignKey("incident.id"), index=True)
    author_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"))
    written_at: Mapped[datetime] = mapped_column(default=utcnow)
    text: Mapped[str] = mapped_column(sa.Text)

    incident: Mapped[Incident] = relationship(back_populates="notes")
    author: Mapped[Person] = relationship()
