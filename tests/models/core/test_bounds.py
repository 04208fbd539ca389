"""Plausible ranges and wall-clock times that a clock change skips or repeats."""
from datetime import date, datetime
from zoneinfo import ZoneInfo

import pytest

from models.core.bounds import date_in_range, local_time_problem, within

BERLIN = ZoneInfo("Europe/Berlin")


@pytest.mark.parametrize("value, expected", [
    (date(1950, 1, 1), True), (date(2100, 12, 31), True), (date(1949, 12, 31), False),
    (date(2101, 1, 1), False), (date(1, 1, 1), False), (date(9999, 12, 31), False),
    (datetime(2026, 3, 1, 9, 30), True), (None, True)])
def test_dates_from_1950_to_2100(value, expected):
    assert date_in_range(value) is expected


@pytest.mark.parametrize("value, expected", [
    (1, True), (366, True), (0, False), (367, False), (3_000_000, False),
    (float("inf"), False), (float("nan"), False), (None, False)])
def test_within_1_to_366(value, expected):
    assert within(value, 1, 366) is expected


# EU summer time starts and ends at 01:00 UTC on the last Sundays of March and October
# (Directive 2000/84/EC): in 2026 on 29 March (02:00 -> 03:00 in Berlin) and 25 October (03:00 -> 02:00).
@pytest.mark.parametrize("wall_clock, problem", [
    (datetime(2026, 3, 29, 2, 30), "did not exist"),
    (datetime(2026, 3, 29, 1, 59), None),
    (datetime(2026, 3, 29, 3, 0), None),
    (datetime(2026, 10, 25, 2, 30), "happened twice"),
    (datetime(2026, 10, 25, 1, 59), None),
    (datetime(2026, 10, 25, 3, 0), None),
    (datetime(2026, 6, 1, 12, 0), None)])
def test_skipped_and_repeated_wall_clock_times_in_berlin(wall_clock, problem):
    message = local_time_problem(wall_clock, BERLIN)
    assert (message is None) if problem is None else (problem in message and "Europe/Berlin" in message)


def test_utc_has_no_clock_changes():
    assert local_time_problem(datetime(2026, 3, 29, 2, 30), ZoneInfo("UTC")) is None
