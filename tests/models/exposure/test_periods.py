from datetime import date

import numpy as np
import pytest

from models.core.codes import PeriodKind, code
from models.exposure.periods import fixed_windows, period_bounds, period_windows, years_before

D = date
NAT = np.datetime64("NaT")


@pytest.mark.parametrize(
    "kind, on, first_block_year, expected",
    [
        (PeriodKind.YEAR, D(2024, 2, 29), 2021, (D(2024, 1, 1), D(2024, 12, 31))),
        (PeriodKind.YEAR, D(2025, 12, 31), 2021, (D(2025, 1, 1), D(2025, 12, 31))),
        # The 12 calendar months up to `on`: from the day after the same date a year earlier.
        (PeriodKind.ROLLING_12_MONTHS, D(2024, 3, 1), 2021, (D(2023, 3, 2), D(2024, 3, 1))),
        # 29 Feb 2023 does not exist: 28 Feb 2023 + 1 day; 366 days.
        (PeriodKind.ROLLING_12_MONTHS, D(2024, 2, 29), 2021, (D(2023, 3, 1), D(2024, 2, 29))),
        # a year before 28 Feb 2025 is 28 Feb 2024: from 29 Feb 2024, 366 days.
        (PeriodKind.ROLLING_12_MONTHS, D(2025, 2, 28), 2021, (D(2024, 2, 29), D(2025, 2, 28))),
        (PeriodKind.ROLLING_12_MONTHS, D(2025, 3, 1), 2021, (D(2024, 3, 2), D(2025, 3, 1))),
        (PeriodKind.ROLLING_12_MONTHS, D(2025, 6, 30), 2021, (D(2024, 7, 1), D(2025, 6, 30))),
        (PeriodKind.QUARTER, D(2024, 1, 1), 2021, (D(2024, 1, 1), D(2024, 3, 31))),
        (PeriodKind.QUARTER, D(2024, 3, 31), 2021, (D(2024, 1, 1), D(2024, 3, 31))),
        (PeriodKind.QUARTER, D(2024, 4, 1), 2021, (D(2024, 4, 1), D(2024, 6, 30))),
        (PeriodKind.QUARTER, D(2024, 9, 30), 2021, (D(2024, 7, 1), D(2024, 9, 30))),
        (PeriodKind.QUARTER, D(2024, 10, 1), 2021, (D(2024, 10, 1), D(2024, 12, 31))),
        (PeriodKind.QUARTER, D(2024, 12, 31), 2021, (D(2024, 10, 1), D(2024, 12, 31))),
        (PeriodKind.MONTH, D(2024, 2, 10), 2021, (D(2024, 2, 1), D(2024, 2, 29))),
        (PeriodKind.MONTH, D(2023, 2, 28), 2021, (D(2023, 2, 1), D(2023, 2, 28))),
        (PeriodKind.MONTH, D(2024, 12, 31), 2021, (D(2024, 12, 1), D(2024, 12, 31))),
        (PeriodKind.FIVE_YEAR_BLOCK, D(2021, 1, 1), 2021, (D(2021, 1, 1), D(2025, 12, 31))),
        (PeriodKind.FIVE_YEAR_BLOCK, D(2025, 12, 31), 2021, (D(2021, 1, 1), D(2025, 12, 31))),
        (PeriodKind.FIVE_YEAR_BLOCK, D(2026, 1, 1), 2021, (D(2026, 1, 1), D(2030, 12, 31))),
        (PeriodKind.FIVE_YEAR_BLOCK, D(2020, 12, 31), 2021, (D(2016, 1, 1), D(2020, 12, 31))),
        (PeriodKind.FIVE_YEAR_BLOCK, D(2024, 5, 5), 2023, (D(2023, 1, 1), D(2027, 12, 31))),
        (PeriodKind.ROLLING_FIVE_YEARS, D(2024, 6, 15), 2021, (D(2019, 6, 16), D(2024, 6, 15))),
        (PeriodKind.ROLLING_FIVE_YEARS, D(2024, 1, 1), 2021, (D(2019, 1, 2), D(2024, 1, 1))),
        # 29 Feb 2019 does not exist: 28 Feb 2019 + 1 day.
        (PeriodKind.ROLLING_FIVE_YEARS, D(2024, 2, 29), 2021, (D(2019, 3, 1), D(2024, 2, 29))),
        (PeriodKind.ROLLING_FIVE_YEARS, D(2025, 2, 28), 2021, (D(2020, 2, 29), D(2025, 2, 28))),
    ],
)
def test_period_bounds(kind, on, first_block_year, expected):
    assert period_bounds(kind, on, first_block_year) == expected


def test_period_bounds_accepts_strings():
    assert period_bounds("quarter", D(2024, 5, 5), 2021) == (D(2024, 4, 1), D(2024, 6, 30))


def test_pregnancy_has_no_fixed_bounds():
    with pytest.raises(ValueError):
        period_bounds(PeriodKind.PREGNANCY, D(2024, 5, 5), 2021)


def test_fixed_windows_cover_every_kind_but_pregnancy():
    windows = fixed_windows(D(2024, 5, 5), 2021)
    assert set(windows) == set(PeriodKind) - {PeriodKind.PREGNANCY}
    assert all(start <= D(2024, 5, 5) <= end for start, end in windows.values())


@pytest.mark.parametrize(
    "day, years, expected",
    [
        (D(2024, 2, 29), 1, D(2023, 2, 28)),
        (D(2024, 2, 29), 4, D(2020, 2, 29)),
        (D(2024, 6, 15), 5, D(2019, 6, 15)),
    ],
)
def test_years_before(day, years, expected):
    assert years_before(day, years) == expected


def _dates(*values):
    return np.array([NAT if v is None else np.datetime64(v, "D") for v in values], "datetime64[D]")


PREG = code(PeriodKind.PREGNANCY)


@pytest.mark.parametrize(
    "declared, ended, expected_start, expected_end, elapsed, total",
    [
        (None, None, None, None, None, None),
        # open declaration: runs to `on`, fully elapsed, so its projection equals its dose
        (D(2024, 3, 1), None, D(2024, 3, 1), D(2024, 4, 10), 41, 41),
        (D(2024, 4, 10), None, D(2024, 4, 10), D(2024, 4, 10), 1, 1),
        # declared after the evaluation date: no window yet
        (D(2024, 5, 1), None, None, None, None, None),
        # ended before `on`
        (D(2024, 1, 10), D(2024, 3, 1), D(2024, 1, 10), D(2024, 3, 1), 52, 52),
        # an expected end after `on` lets the projection run to it
        (D(2024, 3, 1), D(2024, 11, 30), D(2024, 3, 1), D(2024, 11, 30), 41, 275),
    ],
)
def test_pregnancy_window(declared, ended, expected_start, expected_end, elapsed, total):
    windows = period_windows(D(2024, 4, 10), 1, 2021, _dates(declared), _dates(ended))
    assert windows.exists[0, PREG] == (expected_start is not None)
    if expected_start is None:
        assert np.isnat(windows.start[0, PREG]) and np.isnan(windows.elapsed_fraction[0, PREG])
    else:
        assert windows.start[0, PREG] == np.datetime64(expected_start, "D")
        assert windows.end[0, PREG] == np.datetime64(expected_end, "D")
        assert windows.elapsed_days[0, PREG] == elapsed
        assert windows.total_days[0, PREG] == total


@pytest.mark.parametrize(
    "kind, elapsed, total",
    [
        (PeriodKind.YEAR, 101, 366),
        (PeriodKind.QUARTER, 10, 91),
        (PeriodKind.MONTH, 10, 30),
        # 11 Apr 2023 to 10 Apr 2024 holds 29 Feb 2024: 366 days
        (PeriodKind.ROLLING_12_MONTHS, 366, 366),
        (PeriodKind.FIVE_YEAR_BLOCK, 3 * 365 + 101, 4 * 365 + 366),
        (PeriodKind.ROLLING_FIVE_YEARS, 1827, 1827),
    ],
)
def test_elapsed_and_total_days(kind, elapsed, total):
    windows = period_windows(D(2024, 4, 10), 2, 2021)
    t = code(kind)
    assert windows.elapsed_days[:, t].tolist() == [elapsed, elapsed]
    assert windows.total_days[:, t].tolist() == [total, total]
    assert windows.elapsed_fraction[0, t] == pytest.approx(elapsed / total)
    assert (windows.counted_end[:, t] == np.datetime64(D(2024, 4, 10), "D")).all()


def test_windows_are_per_person():
    windows = period_windows(D(2024, 4, 10), 3, 2021, _dates(None, "2024-03-01", "2024-05-01"))
    assert windows.exists[:, PREG].tolist() == [False, True, False]
    assert windows.exists[:, : PREG].all()


@pytest.mark.parametrize(
    "declared, ended",
    [
        (_dates("2024-03-01"), _dates("2024-02-01")),  # ends before it was declared
        (_dates(None), _dates("2024-02-01")),  # an end without a declaration
        (_dates("2024-03-01", None), None),  # wrong length for one person
    ],
)
def test_invalid_pregnancy_dates(declared, ended):
    with pytest.raises(ValueError):
        period_windows(D(2024, 4, 10), 1, 2021, declared, ended)
