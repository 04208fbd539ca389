"""Dosimeters, dose records with their versions, pregnancy declarations and investigations."""
from __future__ import annotations

from datetime import date, datetime

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column, relationship

from models.core.base import Base, IdMixin, enum_column, utcnow
from models.core.codes import (
    LensSource,
    Level,
    LevelKind,
    Location,
    MrdPolicy,
    PeriodKind,
    Proration,
    Quantity,
    Series,
    WorkerCategory,
)
from models.people.tables import Person


class PregnancyDeclaration(IdMixin, Base):
    """A declared pregnancy; seen only by the person and the safety officer."""

    __tablename__ = "pregnancy_declaration"

    person_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"), index=True)
    declared_on: Mapped[date]
    # Estimated date of conception (optional, as confidential as the declaration) and expected end.
    conception_on: Mapped[date | None]
    expected_end_on: Mapped[date | None]
    ended_on: Mapped[date | None]
    end_reason: Mapped[str | None] = mapped_column(sa.String(32))
    recorded_by_id: Mapped[int | None] = mapped_column(sa.ForeignKey("person.id"))
    created_at: Mapped[datetime] = mapped_column(default=utcnow)

    person: Mapped[Person] = relationship(foreign_keys=[person_id])

    __table_args__ = (
        sa.CheckConstraint("ended_on IS NULL OR ended_on >= declared_on", name="end_after_declaration"),
    )


class Investigation(IdMixin, Base):
    """The safety officer's review of a dose that crossed an investigation level."""

    __tablename__ = "investigation"

    person_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"), index=True)
    # Which row crossed: the lens and the skin can read the same Hp(0.07) whole-body records.
    series: Mapped[Series] = mapped_column(enum_column(Series))
    quantity: Mapped[Quantity] = mapped_column(enum_column(Quantity))
    location: Mapped[Location] = mapped_column(enum_column(Location))
    period: Mapped[PeriodKind] = mapped_column(enum_column(PeriodKind))
    period_start: Mapped[date]
    level: Mapped[Level] = mapped_column(enum_column(Level))
    dose_msv: Mapped[float]
    raised_at: Mapped[datetime] = mapped_column(default=utcnow)
    questions: Mapped[str | None] = mapped_column(sa.Text)
    findings: Mapped[str | None] = mapped_column(sa.Text)
    actions: Mapped[str | None] = mapped_column(sa.Text)
    signed_off_by_id: Mapped[int | None] = mapped_column(sa.ForeignKey("person.id"))
    signed_off_at: Mapped[datetime | None]

    person: Mapped[Person] = relationship(foreign_keys=[person_id])

    __table_args__ = (
        sa.UniqueConstraint(
            "person_id", "series", "quantity", "location", "period", "period_start", "level",
            name="uq_investigation_crossing",
        ),
    )






class LimitSet(IdMixin, Base):
    """A named set of dose limit rules, shipped as a preset or copied and edited."""

    __tablename__ = "limit_set"

    name: Mapped[str] = mapped_column(sa.String(120), unique=True)
    preset_key: Mapped[str | None] = mapped_column(sa.String(32))
    description: Mapped[str] = mapped_column(sa.Text, default="")
    # The fetal rule covers the whole pregnancy (from conception), not only from the declaration.
    whole_pregnancy: Mapped[bool] = mapped_column(default=False, server_default=sa.false())
    created_at: Mapped[datetime] = mapped_column(default=utcnow)

    rules: Mapped[list[LimitRule]] = relationship(
        back_populates="limit_set", cascade="all, delete-orphan", order_by="LimitRule.id"
    )


class LimitRule(IdMixin, Base):
    """One limit for one worker category, dose series and period, with its source clause."""

    __tablename__ = "limit_rule"

    limit_set_id: Mapped[int] = mapped_column(sa.ForeignKey("limit_set.id"), index=True)
    category: Mapped[WorkerCategory] = mapped_column(enum_column(WorkerCategory))
    series: Mapped[Series] = mapped_column(enum_column(Series))
    period: Mapped[PeriodKind] = mapped_column(enum_column(PeriodKind))
    limit_msv: Mapped[float | None]
    level1_kind: Mapped[LevelKind | None] = mapped_column(enum_column(LevelKind, "level1_kind"))
    level1_value: Mapped[float | None]
    level2_kind: Mapped[LevelKind | None] = mapped_column(enum_column(LevelKind, "level2_kind"))
    level2_value: Mapped[float | None]
    clause: Mapped[str] = mapped_column(sa.String(300), default="")

    limit_set: Mapped[LimitSet] = relationship(back_populates="rules")

    __table_args__ = (
        sa.CheckConstraint("limit_msv IS NULL OR limit_msv > 0", name="limit_positive"),
        sa.CheckConstraint("level1_value IS NULL OR level1_value > 0", name="level1_positive"),
        sa.CheckConstraint("level2_value IS NULL OR level2_value > 0", name="level2_positive"),
    )


POLICIES_ALL_OR_NONE = (
    "(proration IS NULL AND mrd_policy IS NULL AND lens_source IS NULL AND five_year_first_year IS NULL) OR "
    "(proration IS NOT NULL AND mrd_policy IS NOT NULL AND lens_source IS NOT NULL "
    "AND five_year_first_year IS NOT NULL)"
)


class RuleChange(IdMixin, Base):
    """From a lab date on, a limit set and/or counting policies apply, until a later change of the same.

    The set and the policies have histories of their own in this one table: a row that changes only
    the policies leaves the set as it stood, and a change into the past never undoes a later one of
    the other kind. The history is the rules' one source: an evaluation on a date uses what stood on
    it; `lab_settings` keeps a copy of today's, written only with a change.
    """

    __tablename__ = "rule_change"

    from_on: Mapped[date] = mapped_column(index=True)
    # The row puts limit_set_id in force (None: no limit set; the doses are summed, not assessed).
    sets_limit_set: Mapped[bool]
    limit_set_id: Mapped[int | None] = mapped_column(sa.ForeignKey("limit_set.id"))
    # The policies, all four or none (None: the row leaves the policies as they stood).
    proration: Mapped[Proration | None] = mapped_column(enum_column(Proration))
    mrd_policy: Mapped[MrdPolicy | None] = mapped_column(enum_column(MrdPolicy))
    lens_source: Mapped[LensSource | None] = mapped_column(enum_column(LensSource))
    five_year_first_year: Mapped[int | None]
    changed_by_id: Mapped[int | None] = mapped_column(sa.ForeignKey("person.id"))
    # None only on the row the history began with (migration 0031): when that was decided is unknown.
    changed_at: Mapped[datetime | None] = mapped_column(default=utcnow)
    reason: Mapped[str] = mapped_column(sa.Text)

    limit_set: Mapped[LimitSet | None] = relationship()
    changed_by: Mapped[Person | None] = relationship(foreign_keys=[changed_by_id])

    __table_args__ = (
        sa.CheckConstraint("from_on BETWEEN '1950-01-01' AND '2100-12-31'", name="from_on_in_range"),
        sa.CheckConstraint("sets_limit_set OR limit_set_id IS NULL", name="set_only_when_setting"),
        sa.CheckConstraint(POLICIES_ALL_OR_NONE, name="policies_all_or_none"),
        sa.CheckConstraint("sets_limit_set OR proration IS NOT NULL", name="changes_something"),
    )


class ExposureFigures(Base):
    """One person's evaluation on the lab's current date, stored so every server process shares it.

    Derived from the dose inputs and rewritten with them in the same transaction
    (`models/exposure/figures_ops.py`), outside the ORM, so the audit's row check leaves it out.
    """

    __tablename__ = "exposure_figures"
    __table_args__ = {"info": {"audited": False, "audit_rows": False}}

    person_id: Mapped[int] = mapped_column(sa.ForeignKey("person.id"), primary_key=True, autoincrement=False)
    evaluated_on: Mapped[date]
    # A digest of the policies and limit set the figures were evaluated with.
    rules: Mapped[str] = mapped_column(sa.String(64))
    # The person's slice of every evaluation array, in the fixed layout figures_ops.LAYOUT.
    figures: Mapped[bytes] = mapped_column(sa.LargeBinary)
