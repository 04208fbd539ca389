"""Limit sets: named, editable rules with investigation levels."""
from __future__ import annotations

from datetime import datetime

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, mapped_column, relationship

from models.base import Base, IdMixin, enum_column, utcnow
from models.dose_codes import LevelKind, PeriodKind, Series, WorkerCategory


class LimitSet(IdMixin, Base):
    """A named set of dose limit rules, shipped as a preset or copied and edited."""

    __tablename__ = "limit_set"

    name: Mapped[str] = mapped_column(sa.String(120), unique=True)
    preset_key: Mapped[str | None] = mapped_column(sa.String(32))
    description: Mapped[str] = mapped_column(sa.Text, default="")
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
