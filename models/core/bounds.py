"""Plausible ranges for what people type: dates, numbers and intervals outside them are refused.

A value outside its range is a typing slip or an attack, never a record; refusing it keeps every
later calculation (due dates, periods, tube power) within what the database and the engine handle.
"""
from __future__ import annotations

import math
from datetime import UTC, date, datetime
from zoneinfo import ZoneInfo

EARLIEST = date(1950, 1, 1)
LATEST = date(2100, 12, 31)
DATE_MESSAGE = "Enter a date between 1950 and 2100."
# Database integer columns are 32-bit signed on PostgreSQL.
MAX_ID = 2**31 - 1


def date_in_range(value: date | datetime | None) -> bool:
    """True for a date (or time) from 1950 to 2100, inclusive; None passes (emptiness is checked elsewhere)."""
    if value is None:
        return True
    day = value.date() if isinstance(value, datetime) else value
    return EARLIEST <= day <= LATEST


def within(value: float | None, low: float, high: float) -> bool:
    """True for a finite number from `low` to `high`, inclusive."""
    return value is not None and math.isfinite(value) and low <= value <= high


def range_text(low: float, high: float, unit: str) -> str:
    """How a range reads on a form and in a refusal, e.g. "1 to 366 days"."""
    return f"{low:,g} to {high:,g} {unit}"


def local_time_problem(wall_clock: datetime, zone: ZoneInfo) -> str | None:
    """Why a wall-clock time cannot be placed in the zone (skipped or repeated at a clock change), or None."""
    naive = wall_clock.replace(tzinfo=None)
    earlier, later = naive.replace(tzinfo=zone, fold=0), naive.replace(tzinfo=zone, fold=1)
    shown = naive.strftime("%Y-%m-%d %H:%M")
    if earlier.astimezone(UTC).astimezone(zone).replace(tzinfo=None) != naive:
        return (f"{shown} did not exist in {zone.key}: the clocks went forward then. "
                "Enter the time as the clock showed it.")
    if earlier.utcoffset() != later.utcoffset():
        return (f"{shown} happened twice in {zone.key} (the clocks went back), so it cannot be told "
                "which one you mean. Enter the nearest time outside the repeated hour and say so in the notes.")
    return None
