"""Due dates and states: month ends, leap days, boundaries, permit windows."""
from datetime import UTC, date, datetime, timedelta, timezone

import pytest

from models.core import due_dates

D = date.fromisoformat


def utc(text):
    """An aware UTC datetime from an ISO string."""
    return datetime.fromisoformat(text).replace(tzinfo=UTC)


@pytest.mark.parametrize(
    ("start", "months", "expected"),
    [
        ("2025-01-31", 1, "2025-02-28"),  # clamped to the end of February
        ("2024-01-31", 1, "2024-02-29"),  # leap year
        ("2024-02-29", 12, "2025-02-28"),  # leap day has no anniversary
        ("2024-02-29", 48, "2028-02-29"),  # next leap year keeps the day
        ("2025-03-31", 1, "2025-04-30"),
        ("2025-08-31", 6, "2026-02-28"),
        ("2025-11-15", 3, "2026-02-15"),  # across the year end
        ("2025-05-15", 12, "2026-05-15"),
        ("2025-03-31", -1, "2025-02-28"),
    ],
)
def test_add_months(start, months, expected):
    assert due_dates.add_months(D(start), months) == D(expected)


@pytest.mark.parametrize(
    ("last_done", "interval_days", "expected"),
    [
        ("2024-12-15", 30, "2025-01-14"),  # 30-day interval across the year end
        ("2024-02-15", 30, "2024-03-16"),  # through a leap February
        ("2025-02-15", 30, "2025-03-17"),
        ("2025-01-01", 365, "2026-01-01"),
        ("2024-01-01", 365, "2024-12-31"),  # a leap year is 366 days
        (None, 30, None),  # never done
    ],
)
def test_next_due(last_done, interval_days, expected):
    last = None if last_done is None else D(last_done)
    assert due_dates.next_due(last, interval_days) == (None if expected is None else D(expected))


@pytest.mark.parametrize("interval_days", [0, -30])
def test_next_due_refuses_empty_interval(interval_days):
    with pytest.raises(ValueError, match="at least 1 day"):
        due_dates.next_due(D("2025-01-01"), interval_days)


TODAY = D("2025-06-10")


@pytest.mark.parametrize(
    ("due_on", "soon_days", "state"),
    [
        (None, 7, due_dates.NEVER_DONE),
        ("2025-06-10", 7, due_dates.DUE_SOON),  # due today
        ("2025-06-11", 7, due_dates.DUE_SOON),  # due tomorrow
        ("2025-06-17", 7, due_dates.DUE_SOON),  # 7 days left: last day of the soon window
        ("2025-06-18", 7, due_dates.OK),  # 8 days left
        ("2025-06-09", 7, due_dates.OVERDUE),  # overdue by one day
        ("2024-06-10", 7, due_dates.OVERDUE),
        ("2025-06-10", 0, due_dates.DUE_SOON),  # no warning window: due today still counts
        ("2025-06-11", 0, due_dates.OK),
        ("2025-07-10", 30, due_dates.DUE_SOON),
    ],
)
def test_due_state(due_on, soon_days, state):
    assert due_dates.due_state(None if due_on is None else D(due_on), TODAY, soon_days) == state


@pytest.mark.parametrize(
    ("due_on", "days"),
    [("2025-06-11", 0), ("2025-06-10", 0), ("2025-06-09", 1), ("2025-05-10", 31)],
)
def test_days_overdue(due_on, days):
    assert due_dates.days_overdue(D(due_on), TODAY) == days


@pytest.mark.parametrize(
    ("last_pass", "interval_days", "expected"),
    [
        ("2025-05-11", None, "2025-06-10"),  # default 30 days: a lab's own monthly rule
        ("2025-01-01", 182, "2025-07-02"),  # about 6 months: ANSI N43.2 outer bound
        (None, None, None),
    ],
)
def test_check_due(last_pass, interval_days, expected):
    last = None if last_pass is None else D(last_pass)
    args = (last,) if interval_days is None else (last, interval_days)
    assert due_dates.check_due(*args) == (None if expected is None else D(expected))


@pytest.mark.parametrize(
    ("last_survey", "open_triggered", "expected"),
    [
        ("2025-01-15", False, "2026-01-15"),  # default 365 days: 25 Pa. Code 227a
        ("2025-01-15", True, "2025-06-10"),  # a trigger makes it due today
        ("2024-01-15", True, "2025-01-14"),  # already overdue stays overdue
        (None, False, None),
        (None, True, "2025-06-10"),
    ],
)
def test_survey_due(last_survey, open_triggered, expected):
    last = None if last_survey is None else D(last_survey)
    got = due_dates.survey_due(last, open_triggered=open_triggered, today=TODAY)
    assert got == (None if expected is None else D(expected))


def test_triggered_survey_state_is_due_today():
    got = due_dates.survey_due(D("2025-01-15"), 365, open_triggered=True, today=TODAY)
    assert due_dates.due_state(got, TODAY) == due_dates.DUE_SOON


def test_triggered_survey_needs_today():
    with pytest.raises(ValueError, match="today is needed"):
        due_dates.survey_due(D("2025-01-15"), 365, open_triggered=True)


@pytest.mark.parametrize(
    ("calibrated_on", "months", "expected"),
    [
        ("2025-03-01", None, "2026-03-01"),  # default 12 months: N.D. Admin. Code 33.1-10-15-08
        ("2024-02-29", 12, "2025-02-28"),
        ("2025-01-31", 6, "2025-07-31"),
        (None, 12, None),
    ],
)
def test_calibration_due(calibrated_on, months, expected):
    cal = None if calibrated_on is None else D(calibrated_on)
    args = (cal,) if months is None else (cal, months)
    assert due_dates.calibration_due(*args) == (None if expected is None else D(expected))


@pytest.mark.parametrize(
    ("calibrated_on", "on_date", "valid"),
    [
        ("2025-03-01", "2025-03-01", True),  # the calibration day itself
        ("2025-03-01", "2026-02-28", True),  # day before the anniversary (common practice)
        ("2025-03-01", "2026-03-01", False),  # on the anniversary: expired
        ("2025-03-01", "2025-02-28", False),  # before this calibration
        ("2024-02-29", "2025-02-27", True),
        ("2024-02-29", "2025-02-28", False),  # clamped anniversary of a leap day
        (None, "2025-03-01", False),  # never calibrated
    ],
)
def test_calibration_valid_on(calibrated_on, on_date, valid):
    cal = None if calibrated_on is None else D(calibrated_on)
    assert due_dates.calibration_valid_on(cal, 12, D(on_date)) is valid


@pytest.mark.parametrize(
    ("trained_on", "months", "expected"),
    [
        ("2025-04-30", None, "2026-04-30"),  # default 12 months: common practice
        ("2024-02-29", None, "2025-02-28"),
        ("2025-08-31", 6, "2026-02-28"),
    ],
)
def test_refresher_due(trained_on, months, expected):
    args = (D(trained_on),) if months is None else (D(trained_on), months)
    assert due_dates.refresher_due(*args) == D(expected)


START = utc("2025-06-10T08:00:00")
END = utc("2025-06-10T17:00:00")


@pytest.mark.parametrize(
    ("now", "state"),
    [
        (START - timedelta(microseconds=1), due_dates.PENDING),
        (START, due_dates.ACTIVE),  # the window opens at its start
        (END - timedelta(microseconds=1), due_dates.ACTIVE),
        (END, due_dates.EXPIRED),  # the approval has run out at its end
        (utc("2025-06-11T00:00:00"), due_dates.EXPIRED),
        # Same instant as START written in UTC+2: aware comparison, not wall clock.
        (datetime(2025, 6, 10, 10, 0, tzinfo=timezone(timedelta(hours=2))), due_dates.ACTIVE),
    ],
)
def test_permit_state(now, state):
    assert due_dates.permit_state(START, END, now) == state


@pytest.mark.parametrize(
    ("start", "end", "now", "message"),
    [
        (START.replace(tzinfo=None), END, START, "timezone-aware"),
        (START, END, START.replace(tzinfo=None), "timezone-aware"),
        (END, START, START, "end after it starts"),
        (START, START, START, "end after it starts"),
    ],
)
def test_permit_state_refuses_bad_windows(start, end, now, message):
    with pytest.raises(ValueError, match=message):
        due_dates.permit_state(start, end, now)


def test_constants_carry_their_sources():
    assert due_dates.DEFAULT_CHECK_INTERVAL_DAYS == 30  # a lab's own rule (common practice)
    assert due_dates.CHECK_INTERVAL_OUTER_BOUNDS == (
        (6, "ANSI N43.2 as quoted in DOE-HDBK-1109-97"),
        (12, "25 Pa. Code 227a.20"),
    )
    assert due_dates.DEFAULT_SURVEY_INTERVAL_DAYS == 365  # 25 Pa. Code 227a; Mont. ARM 37.14.1306
    assert due_dates.METER_CALIBRATION_MONTHS == 12  # N.D. Admin. Code 33.1-10-15-08
    assert due_dates.REFRESHER_MONTHS == 12  # common practice
