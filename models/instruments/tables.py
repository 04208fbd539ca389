"""Instruments, their checklist templates, authorisations and API tokens."""
from __future__ import annotations

import enum
from datetime import date, datetime

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column, relationship

from models.core.base import Base, IdMixin, enum_column, utcnow
from models.people.tables import Person


class InstrumentKind(enum.StrEnum):
    """The kind of analytical X-ray equipment."""

    POWDER_XRD = "powder_xrd"
    SINGLE_CRYSTAL_XRD = "single_crystal_xrd"
    XRF = "xrf"
    SAXS = "saxs"
    OPEN_BEAM = "open_beam"
    OTHER = "other"


KIND_LABELS = {
    InstrumentKind.POWDER_XRD: "Powder diffractometer",
    InstrumentKind.SINGLE_CRYSTAL_XRD: "Single-crystal diffractometer",
    InstrumentKind.XRF: "X-ray fluorescence spectrometer",
    InstrumentKind.SAXS: "Small-angle scattering camera",
    InstrumentKind.OPEN_BEAM: "Open-beam / custom set-up",
    InstrumentKind.OTHER: "Other",
}


class Enclosure(enum.StrEnum):
    """Whether the beam path is fully enclosed."""

    ENCLOSED = "enclosed"
    OPEN_BEAM = "open_beam"


class AuthorisationLevel(enum.StrEnum):
    """How far an operator may work on an instrument alone."""

    SUPERVISED = "supervised"
    INDEPENDENT = "independent"


# Survey action levels, uSv/h at 5 cm.
# ANSI N43.2 as quoted in DOE-HDBK-1109-97: enclosed system, any outer surface.
ENCLOSED_SURFACE_ACTION_LEVEL_USV_H = 2.5
# 25 Pa. Code 227a.13(b): 2.5 mrem in 1 hour at 5 cm from the tube housing, all shutters closed
# (Tennessee 0400-20-06-.07(1)(a) states 2.5 mR in 1 hour at 5 cm, at any specified tube rating).
HOUSING_LEAKAGE_ACTION_LEVEL_USV_H = 25.0


class ChecklistTemplate(IdMixin, Base):
    """A named list of safety-device check items."""

    __tablename__ = "checklist_template"

    name: Mapped[str] = mapped_column(sa.String(120), unique=True)
    items: Mapped[list[ChecklistItem]] = relationship(
        back_populates="template", order_by="ChecklistItem.position", cascade="all, delete-orphan"
    )


class ChecklistItem(IdMixin, Base):
    """One line of a checklist: a device or sign to test."""

    __tablename__ = "checklist_item"

    template_id: Mapped[int] = mapped_column(sa.ForeignKey("checklist_template.id"))
    position: Mapped[int] = mapped_column(default=0)
    text: Mapped[str] = mapped_column(sa.String(300))
    active: Mapped[bool] = mapped_column(default=True)
    template: Mapped[ChecklistTemplate] = relationship(back_populates="items")


class Instrument(IdMixin, Base):
    """An X-ray generator with its tube, enclosure and safety schedule."""

    __tablename__ = "instrument"

    name: Mapped[str] = mapped_column(sa.String(120), unique=True)
    kind: Mapped[InstrumentKind] = mapped_column(enum_column(InstrumentKind))
    room: Mapped[str] = mapped_column(sa.String(120), default="")
    registration_number: Mapped[str] = mapped_column(sa.String(120), default="")
    anode: Mapped[str] = mapped_column(sa.String(3))
    max_kv: Mapped[float]
    max_ma: Mapped[float]
    max_power_w: Mapped[float]
    enclosure: Mapped[Enclosure] = mapped_column(enum_column(Enclosure))
    check_interval_days: Mapped[int] = mapped_column(default=30)
    survey_interval_days: Mapped[int] = mapped_column(default=365)
    surface_action_level_usv_h: Mapped[float] = mapped_column(
        default=ENCLOSED_SURFACE_ACTION_LEVEL_USV_H
    )
    housing_action_level_usv_h: Mapped[float] = mapped_column(
        default=HOUSING_LEAKAGE_ACTION_LEVEL_USV_H
    )
    in_service: Mapped[bool] = mapped_column(default=True)
    out_of_service_reason: Mapped[str | None] = mapped_column(sa.Text)
    out_of_service_since: Mapped[datetime | None]
    # None when a person took the instrument out; a short code (e.g. "check") when the logbook did
    # it itself, so that only the matching event (a passing check) may bring it back.
    out_of_service_cause: Mapped[str | None] = mapped_column(sa.String(32))
    retired_at: Mapped[datetime | None]
    # A new instrument is not yet commissioned: it enters service once a checklist exists and a
    # safety-device check and a survey have passed; the dates stay as its history.
    commissioned_at: Mapped[datetime | None]
    commissioning_check_at: Mapped[datetime | None]
    commissioning_survey_at: Mapped[datetime | None]
    checklist_template_id: Mapped[int | None] = mapped_column(
        sa.ForeignKey("checklist_template.id")
    )
    created_at: Mapped[datetime] = mapped_column(default=utcnow)

    checklist_template: Mapped[ChecklistTemplate | None] = relationship()

    __table_args__ = (
        sa.CheckConstraint("max_kv > 0", name="max_kv_positive"),
        sa.CheckConstraint("max_ma > 0", name="max_ma_positive"),
        sa.CheckConstraint("max_power_w > 0", name="max_power_positive"),
        sa.CheckConstraint("check_interval_days > 0", name="check_interval_positive"),
        sa.CheckConstraint("survey_interval_days > 0", name="survey_interval_positive"),
        sa.CheckConstraint("surface_action_level_usv_h > 0", name="surface_level_positive"),
        sa.CheckConstraint("housing_action_level_usv_h > 0", name="housing_level_positive"),
        sa.CheckConstraint("length(trim(name)) > 0", name="name_not_blank"),
    )

    @property
    def commissioned(self) -> bool:
        """Commissioned instruments may be in service; new ones wait for a check and a survey."""
        return self.commissioned_at is not None

    @property
    def retired(self) -> bool:
        """A retired instrument stays in the records but takes no new work."""
        return self.retired_at is not None

    def __repr__(self) -> str:
        return f"<Instrument {self.name}>"


class Authorisation(IdMixin, Base):
    """Permission for one person to operate one instrument."""

    __tablename__ = "authorisation"

    person_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"))
    instrument_id: Mapped[int] = mapped_column(sa.ForeignKey("instrument.id"))
    level: Mapped[AuthorisationLevel] = mapped_column(enum_column(AuthorisationLevel))
    trained_on: Mapped[date]
    refresher_due: Mapped[date]
    granted_by_id: Mapped[int | None] = mapped_column(sa.ForeignKey("person.id"))
    granted_at: Mapped[datetime] = mapped_column(default=utcnow)
    revoked_at: Mapped[datetime | None]
    # Set, with revoked_at, when a later authorisation of the same person on the same instrument
    # renewed or changed this one: the row stays as history, the newer one is the current one.
    replaced_by_id: Mapped[int | None] = mapped_column(sa.ForeignKey("authorisation.id"))

    person: Mapped[Person] = relationship(foreign_keys=[person_id])
    instrument: Mapped[Instrument] = relationship()
    granted_by: Mapped[Person | None] = relationship(foreign_keys=[granted_by_id])

    __table_args__ = (
        sa.CheckConstraint("refresher_due >= trained_on", name="refresher_after_training"),
        # One current authorisation per person and instrument, even with two officers at once.
        sa.Index("uq_authorisation_current", "person_id", "instrument_id", unique=True,
                 sqlite_where=sa.text("revoked_at IS NULL"),
                 postgresql_where=sa.text("revoked_at IS NULL")),
    )


class ApiToken(IdMixin, Base):
    """A secret that lets one instrument PC log sessions; only its hash is stored."""

    __tablename__ = "api_token"

    instrument_id: Mapped[int] = mapped_column(sa.ForeignKey("instrument.id"))
    token_hash: Mapped[str] = mapped_column(sa.String(64), unique=True)
    created_by_id: Mapped[int | None] = mapped_column(sa.ForeignKey("person.id"))
    created_at: Mapped[datetime] = mapped_column(default=utcnow)
    revoked_at: Mapped[datetime | None]

    instrument: Mapped[Instrument] = relationship()


class IdempotencyKey(IdMixin, Base):
    """The first answer to an instrument PC's post that carried an Idempotency-Key, for its retries."""

    __tablename__ = "idempotency_key"

    instrument_id: Mapped[int] = mapped_column(sa.ForeignKey("instrument.id"))
    key: Mapped[str] = mapped_column(sa.String(255))
    request_hash: Mapped[str] = mapped_column(sa.String(64))
    status: Mapped[int | None]
    response: Mapped[str | None] = mapped_column(sa.Text)
    created_at: Mapped[datetime] = mapped_column(default=utcnow)

    __table_args__ = (sa.UniqueConstraint("instrument_id", "key"),)
