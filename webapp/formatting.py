"""Conversions at the edge: UTC to the lab's time, mSv to the display unit."""
from __future__ import annotations

from datetime import UTC, date, datetime, time
from zoneinfo import ZoneInfo

from flask import Flask, g

from models.core.base import utcnow
from models.core.settings import LabSettings, lab_settings
from models.core.units import from_msv
from webapp.extensions import db

CAUTION = (
    "This logbook supports, and does not replace, your local rules, the law that applies to your "
    "lab and your radiation safety officer. Its figures are only as good as the records entered "
    "and are not the official dose record."
)


def settings() -> LabSettings:
    """The lab settings, loaded once per request."""
    if "lab_settings" not in g:
        g.lab_settings = lab_settings(db.session)
    return g.lab_settings


def lab_zone() -> ZoneInfo:
    """The lab's own time zone."""
    return ZoneInfo(settings().timezone)


def local(dt: datetime | None, fmt: str = "%Y-%m-%d %H:%M") -> str:
    """A UTC datetime shown in the lab's time zone."""
    if dt is None:
        return ""
    return dt.astimezone(lab_zone()).strftime(fmt)


def lab_today() -> date:
    """Today's date in the lab's time zone."""
    return utcnow().astimezone(lab_zone()).date()


def day_start(text: str | None) -> datetime | None:
    """The first moment of a lab date given as YYYY-MM-DD (1950-2100), or None if absent or bad."""
    try:
        day = datetime.strptime(text or "", "%Y-%m-%d").date()
    except ValueError:
        return None
    if not 1950 <= day.year <= 2100:
        return None
    return datetime.combine(day, time.min, tzinfo=lab_zone())


def dose(value_msv: float | None, digits: int = 3) -> str:
    """A dose in the lab's display unit."""
    if value_msv is None:
        return "—"
    if settings().display_unit == "mrem":
        return f"{from_msv(value_msv, 'mrem'):.{max(digits - 2, 0)}f} mrem"
    return f"{value_msv:.{digits}f} mSv"


def capfirst(text: str) -> str:
    """The text with its first letter in upper case (labels are written to sit inside sentences)."""
    return text[:1].upper() + text[1:]


def install(app: Flask) -> None:
    """Make the helpers available to every template."""
    app.jinja_env.filters["local"] = local
    app.jinja_env.filters["dose"] = dose
    app.jinja_env.filters["capfirst"] = capfirst

    @app.context_processor
    def _globals() -> dict:
        return {"CAUTION": CAUTION, "lab_today": lab_today, "lab_zone_name": lambda: settings().timezone}


def from_local(naive: datetime | None) -> datetime | None:
    """A wall-clock time entered in the lab's time zone, as aware UTC (None stays None)."""
    if naive is None:
        return None
    return naive.replace(tzinfo=lab_zone()).astimezone(UTC)
