"""Due dates and their states, as pure functions of dates.

Boundaries, one rule for everything: a task is "due_soon" from soon_days before its due date up
to and including the due date, and "overdue" from the day after. Durations in months use
dateutil's relativedelta, which clamps to the end of a shorter month (Jan 31 + 1 month = Feb 28,
or Feb 29 in a leap year).
"""
from __future__ import annotations

from datetime import date, datetime, timedelta

from dateutil.relativedelta import relativedelta

# A lab's own rule; no public source requires it (common practice, REFERENCE.md).
DEFAULT_CHECK_INTERVAL_DAYS = 30

# Published outer bounds for safety-device checks, shown as help beside the interval setting.
CHECK_INTERVAL_OUTER_BOUNDS = (
    (6, "ANSI N43.2 as quoted in DOE-HDBK-1109-97"),
    (12, "25 Pa. Code 227a.20"),
)

# Survey at least yearly: 25 Pa. Code 227a; Mont. ARM 37.14.1306.
DEFAULT_SURVEY_INTERVAL_DAYS = 365

# Common state rule, e.g. N.D. Admin. Code 33.1-10-15-08.
METER_CALIBRATION_MONTHS = 12

# Common practice.
REFRESHER_MONTHS = 12

# Common practice: a week's warning before a task falls due.
DEFAULT_SOON_DAYS = 7

NEVER_DONE = "never_done"
OK = "ok"
DUE_SOON = "due_soon"
OVERDUE = "overdue"

PENDING = "pending"
ACTIVE = "active"
EXPIRED = "expired"


def add_months(d: date, months: int) -> date:
    """The same day `months` later, clamped to the end of a shorter month."""
    return d + relativedelta(months=months)


def next_due(last_done: date | None, interval_days: int) -> date | None:
    """Due date of a task repeated every interval_days; None if it was never done."""
    if interval_days <= 0:
        raise ValueError(f"interval must be at least 1 day, got {interval_days}")
    if last_done is None:
        return None
    return last_done + timedelta(days=interval_days)


def due_state(due: date | None, today: date, soon_days: int = DEFAULT_SOON_DAYS) -> str:
    """NEVER_DONE, OK, DUE_SOON (due within soon_days, today included) or OVERDUE."""
    if due is None:
        return NEVER_DONE
    days_left = (due - today).days
    if days_left < 0:
        return OVERDUE
    if days_left <= soon_days:
        return DUE_SOON
    return OK


def days_overdue(due: date, today: date) -> int:
    """Whole days past the due date; 0 on or before it."""
    return max(0, (today - due).days)


def check_due(
    last_passing_check_date: date | None, interval_days: int = DEFAULT_CHECK_INTERVAL_DAYS
) -> date | None:
    """Next safety-device check date, counted from the last passing check."""
    # A failed check does not restart the clock: only a pass shows the devices work.
    return next_due(last_passing_check_date, interval_days)


def survey_due(
    last_survey_date: date | None,
    interval_days: int = DEFAULT_SURVEY_INTERVAL_DAYS,
    open_triggered: bool = False,
    today: date | None = None,
) -> date | None:
    """Next survey date; an open triggered survey task (needs today) makes it due today."""
    periodic = next_due(last_survey_date, interval_days)
    if not open_triggered:
        return periodic
    if today is None:
        raise ValueError("today is needed to date an open triggered survey")
    # The earlier date wins so that a periodic survey already overdue stays overdue.
    return today if periodic is None else min(periodic, today)


def calibration_due(
    calibrated_on: date | None, interval_months: int = METER_CALIBRATION_MONTHS
) -> date | None:
    """Anniversary on which a survey meter's calibration runs out; None if never calibrated."""
    if calibrated_on is None:
        return None
    return add_months(calibrated_on, interval_months)


def calibration_valid_on(
    calibrated_on: date | None, interval_months: int, on_date: date
) -> bool:
    """Whether a meter calibrated on calibrated_on may be used on on_date."""
    due = calibration_due(calibrated_on, interval_months)
    # Common practice: "valid for 12 months" runs through the day before the anniversary.
    return due is not None and calibrated_on <= on_date < due


def refresher_due(trained_on: date, months: int = REFRESHER_MONTHS) -> date:
    """Date by which an operator needs refresher training."""
    return add_months(trained_on, months)


def permit_state(window_start: datetime, window_end: datetime, now: datetime) -> str:
    """PENDING before the window, ACTIVE from its start, EXPIRED from its end."""
    # Naive datetimes would compare wall clocks across time zones without warning.
    if any(t.tzinfo is None or t.utcoffset() is None for t in (window_start, window_end, now)):
        raise ValueError("permit times must be timezone-aware (UTC)")
    if window_end <= window_start:
        raise ValueError("a permit window must end after it starts")
    if now < window_start:
        return PENDING
    # Half-open window: at window_end the approval has run out.
    if now < window_end:
        return ACTIVE
    return EXPIRED
