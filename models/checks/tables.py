"""Safety-device checks, their item results and temporary written controls."""
from __future__ import annotations

import enum
from datetime import datetime

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column, relationship

from models.core.base import Base, IdMixin, enum_column, utcnow
from models.instruments.tables import Instrument
from models.people.tables import Person


class ItemResult(enum.StrEnum):
    """Outcome of one checklist item."""

    PASS = "pass"
    FAIL = "fail"
    NOT_APPLICABLE = "not_applicable"


class SafetyCheck(IdMixin, Base):
    """A test of an instrument's safety devices against its checklist."""

    __tablename__ = "safety_check"

    instrument_id: Mapped[int] = mapped_column(sa.ForeignKey("instrument.id"), index=True)
    performed_at: Mapped[datetime]
    performed_by_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"))
    meter_id: Mapped[int | None] = mapped_column(sa.ForeignKey("survey_meter.id"))
    passed: Mapped[bool]
    notes: Mapped[str | None] = mapped_column(sa.Text)
    created_at: Mapped[datetime] = mapped_column(default=utcnow)

    instrument: Mapped[Instrument] = relationship()
    performed_by: Mapped[Person] = relationship()
    results: Mapped[list[CheckItemResult]] = relationship(
        back_populates="check", cascade="all, delete-orphan", order_by="CheckItemResult.id"
    )


class CheckItemResult(IdMixin, Base):
    """The result of one checklist item within a check; the item text is kept as tested."""

    __tablename__ = "check_item_result"

    check_id: Mapped[int] = mapped_column(sa.ForeignKey("safety_check.id"), index=True)
    item_id: Mapped[int | None] = mapped_column(sa.ForeignKey("checklist_item.id"))
    item_text: Mapped[str] = mapped_column(sa.String(300))
    result: Mapped[ItemResult] = mapped_column(enum_column(ItemResult))
    comment: Mapped[str | None] = mapped_column(sa.Text)

    check: Mapped[SafetyCheck] = relationship(back_populates="results")

    __table_args__ = (
        sa.CheckConstraint(
            "result <> 'fail' OR (comment IS NOT NULL AND length(trim(comment)) > 0)",
            name="fail_needs_comment",
        ),
    )


class TemporaryControl(IdMixin, Base):
    """Written controls approved by the safety officer that allow use despite a failed device."""

    __tablename__ = "temporary_control"

    instrument_id: Mapped[int] = mapped_column(sa.ForeignKey("instrument.id"), index=True)
    check_id: Mapped[int | None] = mapped_column(sa.ForeignKey("safety_check.id"))
    description: Mapped[str] = mapped_column(sa.Text)
    recorded_by_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"))
    recorded_at: Mapped[datetime] = mapped_column(default=utcnow)
    expires_at: Mapped[datetime]
    ended_at: Mapped[datetime | None]

    instrument: Mapped[Instrument] = relationship()
    recorded_by: Mapped[Person] = relationship()

    __table_args__ = (
        sa.CheckConstraint("expires_at > recorded_at", name="expiry_after_recording"),
    )
