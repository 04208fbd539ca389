"""Bypass permits: time-boxed, approved defeat of a safety device."""
from __future__ import annotations

import enum
from datetime import date, datetime

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column, relationship

from models.core.base import Base, IdMixin, enum_column, utcnow
from models.instruments.tables import Instrument
from models.people.tables import Person


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






class SurveyTrigger(enum.StrEnum):
    """Why a survey was made."""

    INSTALLATION = "installation"
    PERIODIC = "periodic"
    AFTER_MAINTENANCE = "after_maintenance"
    AFTER_ALIGNMENT = "after_alignment"
    AFTER_BYPASS = "after_bypass"
    DOSE_RISE = "dose_rise"
    OTHER = "other"


class PointLevel(enum.StrEnum):
    """Which of the instrument's action levels a survey point is held to."""

    SURFACE = "surface"
    HOUSING = "housing"


class SurveyMeter(IdMixin, Base):
    """A portable radiation meter with its calibration."""

    __tablename__ = "survey_meter"

    serial: Mapped[str] = mapped_column(sa.String(120), unique=True)
    model: Mapped[str] = mapped_column(sa.String(200), default="")
    detector_type: Mapped[str] = mapped_column(sa.String(120), default="")
    calibrated_on: Mapped[date]
    calibration_interval_months: Mapped[int] = mapped_column(default=12)
    correction_factor: Mapped[float] = mapped_column(default=1.0)
    energy_response_notes: Mapped[str | None] = mapped_column(sa.Text)
    retired_at: Mapped[datetime | None]
    created_at: Mapped[datetime] = mapped_column(default=utcnow)

    __table_args__ = (
        sa.CheckConstraint("correction_factor > 0", name="correction_positive"),
        sa.CheckConstraint("calibration_interval_months > 0", name="interval_positive"),
    )


class Survey(IdMixin, Base):
    """A set of dose-rate readings around an instrument."""

    __tablename__ = "survey"

    instrument_id: Mapped[int] = mapped_column(sa.ForeignKey("instrument.id"), index=True)
    performed_at: Mapped[datetime]
    performed_by_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"))
    trigger: Mapped[SurveyTrigger] = mapped_column(enum_column(SurveyTrigger))
    kv: Mapped[float]
    ma: Mapped[float]
    meter_id: Mapped[int] = mapped_column(sa.ForeignKey("survey_meter.id"))
    action_level_usv_h: Mapped[float]
    max_net_usv_h: Mapped[float]
    passed: Mapped[bool]
    notes: Mapped[str | None] = mapped_column(sa.Text)
    created_at: Mapped[datetime] = mapped_column(default=utcnow)

    instrument: Mapped[Instrument] = relationship()
    performed_by: Mapped[Person] = relationship()
    meter: Mapped[SurveyMeter] = relationship()
    points: Mapped[list[SurveyPoint]] = relationship(
        back_populates="survey", cascade="all, delete-orphan", order_by="SurveyPoint.id"
    )

    __table_args__ = (
        sa.CheckConstraint("kv > 0", name="kv_positive"),
        sa.CheckConstraint("ma >= 0", name="ma_not_negative"),
        sa.CheckConstraint("action_level_usv_h > 0", name="action_level_positive"),
    )


class SurveyPoint(IdMixin, Base):
    """One reading, stored in uSv/h as entered after unit conversion."""

    __tablename__ = "survey_point"

    survey_id: Mapped[int] = mapped_column(sa.ForeignKey("survey.id"), index=True)
    location: Mapped[str] = mapped_column(sa.String(200))
    distance_cm: Mapped[float] = mapped_column(default=5.0)
    reading_usv_h: Mapped[float]
    background_usv_h: Mapped[float] = mapped_column(default=0.0)
    net_usv_h: Mapped[float]
    entered_unit: Mapped[str] = mapped_column(sa.String(16), default="uSv/h")
    # The factor from the entered unit to uSv/h used when recorded (mR/h depends on the kV).
    usv_h_per_unit: Mapped[float] = mapped_column(default=1.0)
    level: Mapped[PointLevel] = mapped_column(enum_column(PointLevel), default=PointLevel.SURFACE)
    # The level in force when surveyed: the instrument's own level may change later.
    action_level_usv_h: Mapped[float]

    survey: Mapped[Survey] = relationship(back_populates="points")

    __table_args__ = (
        sa.CheckConstraint("distance_cm > 0", name="distance_positive"),
        sa.CheckConstraint("reading_usv_h >= 0", name="reading_not_negative"),
        sa.CheckConstraint("background_usv_h >= 0", name="background_not_negative"),
        sa.CheckConstraint("action_level_usv_h > 0", name="point_level_positive"),
    )


class SurveyTask(IdMixin, Base):
    """A survey that something in the logbook has asked for."""

    __tablename__ = "survey_task"

    instrument_id: Mapped[int] = mapped_column(sa.ForeignKey("instrument.id"), index=True)
    trigger: Mapped[SurveyTrigger] = mapped_column(enum_column(SurveyTrigger))
    reason: Mapped[str] = mapped_column(sa.Text)
    raised_at: Mapped[datetime] = mapped_column(default=utcnow)
    bypass_permit_id: Mapped[int | None] = mapped_column(sa.ForeignKey("bypass_permit.id"))
    survey_id: Mapped[int | None] = mapped_column(sa.ForeignKey("survey.id"))
    done_at: Mapped[datetime | None]

    instrument: Mapped[Instrument] = relationship()
