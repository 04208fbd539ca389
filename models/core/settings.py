"""The lab's own settings: one row."""
from __future__ import annotations

from datetime import date, datetime, time, timedelta
from typing import TYPE_CHECKING
from zoneinfo import ZoneInfo

import sqlalchemy as sa
from sqlalchemy.orm import Mapped, Session, mapped_column, relationship

from models.core.base import Base, IdMixin, enum_column
from models.core.codes import LensSource, MrdPolicy, Proration

if TYPE_CHECKING:  # core imports no area; the mapper finds the class by name
    from models.exposure.tables import LimitSet


# A working day idle, a week in all (common practice); the ranges keep a typo from locking people
# out (one minute) or leaving a login open for months.
IDLE_TIMEOUT_DEFAULT, IDLE_TIMEOUT_RANGE = 8 * 60, (5, 24 * 60)
SESSION_LIFETIME_DEFAULT, SESSION_LIFETIME_RANGE = 7 * 24, (1, 30 * 24)
FIVE_YEAR_FIRST_YEAR_DEFAULT = 2026


class LabSettings(IdMixin, Base):
    """Policies and preferences that apply to the whole lab."""

    __tablename__ = "lab_settings"

    lab_name: Mapped[str] = mapped_column(sa.String(200), default="X-ray laboratory")
    timezone: Mapped[str] = mapped_column(sa.String(64), default="UTC")
    # The set and policies below are a copy of today's rules; their history (rule_change, in the
    # exposure area) is the source, and only models.exposure.rules_ops writes them.
    limit_set_id: Mapped[int | None] = mapped_column(sa.ForeignKey("limit_set.id"))
    # Installed when the database was created, and not yet confirmed or changed by the safety officer.
    limit_set_by_default: Mapped[bool] = mapped_column(default=False, server_default=sa.false())
    proration: Mapped[Proration] = mapped_column(
        enum_column(Proration), default=Proration.PRORATE_DAYS
    )
    mrd_policy: Mapped[MrdPolicy] = mapped_column(enum_column(MrdPolicy), default=MrdPolicy.ZERO)
    lens_source: Mapped[LensSource] = mapped_column(
        enum_column(LensSource), default=LensSource.HP007
    )
    display_unit: Mapped[str] = mapped_column(sa.String(8), default="mSv")
    five_year_first_year: Mapped[int] = mapped_column(default=FIVE_YEAR_FIRST_YEAR_DEFAULT)
    due_soon_days: Mapped[int] = mapped_column(default=7)
    reminders_enabled: Mapped[bool] = mapped_column(default=True)
    safety_officer_email: Mapped[str | None] = mapped_column(sa.String(254))
    # A login ends after this long without a request, and this long after it began, whatever happens.
    idle_timeout_minutes: Mapped[int] = mapped_column(default=IDLE_TIMEOUT_DEFAULT)
    session_lifetime_hours: Mapped[int] = mapped_column(default=SESSION_LIFETIME_DEFAULT)
    # How the logbook treats people and states at the instrument; each a choice the lab makes.
    public_authorisation: Mapped[str] = mapped_column(sa.String(16), default="supervised")
    late_check_policy: Mapped[str] = mapped_column(sa.String(16), default="warn")
    investigation_policy: Mapped[str] = mapped_column(sa.String(16), default="tell")

    limit_set: Mapped[LimitSet | None] = relationship("LimitSet")

    __table_args__ = (
        sa.CheckConstraint("display_unit IN ('mSv', 'mrem')", name="display_unit_known"),
        sa.CheckConstraint("due_soon_days >= 0", name="due_soon_not_negative"),
        sa.CheckConstraint(f"idle_timeout_minutes BETWEEN {IDLE_TIMEOUT_RANGE[0]} AND {IDLE_TIMEOUT_RANGE[1]}",
                           name="idle_timeout_in_range"),
        sa.CheckConstraint(f"session_lifetime_hours BETWEEN {SESSION_LIFETIME_RANGE[0]} "
                           f"AND {SESSION_LIFETIME_RANGE[1]}", name="session_lifetime_in_range"),
        sa.CheckConstraint("public_authorisation IN ('supervised', 'none')",
                           name="public_authorisation_known"),
        sa.CheckConstraint("late_check_policy IN ('warn', 'refuse')", name="late_check_policy_known"),
        sa.CheckConstraint("investigation_policy IN ('tell', 'clearance')",
                           name="investigation_policy_known"),
    )


_SETTINGS_KEPT = "lab_settings"


def lab_settings(session: Session) -> LabSettings:
    """Return the settings row, creating it with defaults on first use."""
    settings = session.get(LabSettings, 1)
    if settings is None:
        settings = LabSettings(id=1)
        session.add(settings)
        session.flush()
    # The identity map holds rows weakly: without this, each call in a request may read the row again.
    session.info[_SETTINGS_KEPT] = settings
    return settings


def lab_zone(session: Session) -> ZoneInfo:
    """The lab's own time zone, in which due dates and days are counted."""
    return ZoneInfo(lab_settings(session).timezone)


def lab_date(session: Session, moment: datetime) -> date:
    """The lab's calendar date of a UTC moment."""
    return moment.astimezone(lab_zone(session)).date()


def lab_days(first: date, last: date, zone: ZoneInfo) -> tuple[datetime, datetime]:
    """The UTC-comparable [start, end) of lab days `first` to `last`, both inclusive."""
    return (datetime.combine(first, time.min, tzinfo=zone),
            datetime.combine(last + timedelta(days=1), time.min, tzinfo=zone))
