"""Period windows: the calendar, rolling, five-year and pregnancy periods containing a date.

Every window contains the evaluation date `on`, and its dose counts only up to `on`: the counted
part of a window is [start, min(end, on)], both ends inclusive. `end` is the period's own end,
shown on pages and used for projection; for rolling windows it is `on` itself.
"""
from dataclasses import dataclass
from datetime import date, timedelta

import numpy as np
from dateutil.relativedelta import relativedelta

from models.core.codes import PeriodKind, code


def years_before(day: date, years: int) -> date:
    """The same calendar day `years` earlier; 29 February falls back to 28 February."""
    return day - relativedelta(years=years)


def period_bounds(kind: PeriodKind | str, on: date, first_block_year: int) -> tuple[date, date]:
    """(start, end), both inclusive, of the period of `kind` that contains `on`; not pregnancy."""
    match PeriodKind(kind):
        case PeriodKind.YEAR:
            return date(on.year, 1, 1), date(on.year, 12, 31)
        case PeriodKind.ROLLING_12_MONTHS:
            # The 12 calendar months up to `on`: 366 days when they hold a 29 February.
            return years_before(on, 1) + timedelta(days=1), on
        case PeriodKind.QUARTER:
            start = date(on.year, 3 * ((on.month - 1) // 3) + 1, 1)
            return start, start + relativedelta(months=3, days=-1)
        case PeriodKind.MONTH:
            start = on.replace(day=1)
            return start, start + relativedelta(months=1, days=-1)
        case PeriodKind.FIVE_YEAR_BLOCK:
            # Floor division also places dates before the first year in their (earlier) block.
            first = first_block_year + 5 * ((on.year - first_block_year) // 5)
            return date(first, 1, 1), date(first + 4, 12, 31)
        case PeriodKind.ROLLING_FIVE_YEARS:
            return years_before(on, 5) + timedelta(days=1), on
    raise ValueError("pregnancy windows are per person: use period_windows")


def fixed_windows(on: date, first_block_year: int) -> dict[PeriodKind, tuple[date, date]]:
    """(start, end) of every period kind but pregnancy, which is per person."""
    return {
        kind: period_bounds(kind, on, first_block_year)
        for kind in PeriodKind
        if kind is not PeriodKind.PREGNANCY
    }


@dataclass(frozen=True)
class Windows:
    """Every person's window of every period kind: (P, T) datetime64[D] arrays, PeriodKind order.

    NaT marks a window the person does not have (no pregnancy declared on or before `on`).
    """

    on: date
    start: np.ndarray
    end: np.ndarray

    @property
    def exists(self) -> np.ndarray:
        """(P, T) bool: the person has this window."""
        return ~np.isnat(self.start)

    @property
    def counted_end(self) -> np.ndarray:
        """(P, T) datetime64[D]: last day whose dose counts, min(end, on)."""
        return np.minimum(self.end, np.datetime64(self.on, "D"))

    @property
    def elapsed_days(self) -> np.ndarray:
        """(P, T) float: days from start to min(end, on), inclusive; NaN without a window."""
        return _days(self.start, self.counted_end)

    @property
    def total_days(self) -> np.ndarray:
        """(P, T) float: days of the whole period; NaN without a window."""
        return _days(self.start, self.end)

    @property
    def elapsed_fraction(self) -> np.ndarray:
        """(P, T) float in (0, 1]: share of the period already elapsed; 1 for rolling windows."""
        return self.elapsed_days / self.total_days


def _days(start: np.ndarray, end: np.ndarray) -> np.ndarray:
    """Inclusive day counts as floats, NaN where either date is NaT."""
    days = (end - start).astype(float) + 1.0
    return np.where(np.isnat(start) | np.isnat(end), np.nan, days)


def period_windows(
    on: date,
    n_people: int,
    first_block_year: int,
    pregnancy_start=None,
    pregnancy_end=None,
) -> Windows:
    """Windows of all period kinds for P people on `on`.

    pregnancy_start / pregnancy_end: (P,) dates or NaT. The window runs from the declaration date
    to its end (delivery, withdrawal, or an expected date to project to); an open declaration
    (NaT end) ends on `on`, so its projection equals its dose. A declaration after `on` gives no
    window.
    """
    on_day = np.datetime64(on, "D")
    start = np.full((n_people, len(PeriodKind)), np.datetime64("NaT"), dtype="datetime64[D]")
    end = start.copy()
    for kind, (first, last) in fixed_windows(on, first_block_year).items():
        start[:, code(kind)], end[:, code(kind)] = first, last
    p_start, p_end = _pregnancy(n_people, pregnancy_start, pregnancy_end)
    declared = ~np.isnat(p_start) & (p_start <= on_day)
    t = code(PeriodKind.PREGNANCY)
    start[declared, t] = p_start[declared]
    end[declared, t] = np.where(np.isnat(p_end), on_day, p_end)[declared]
    return Windows(on=on, start=start, end=end)


def _pregnancy(n_people: int, pregnancy_start, pregnancy_end) -> tuple[np.ndarray, np.ndarray]:
    """Validated (P,) declaration and end dates."""
    nat = np.full(n_people, np.datetime64("NaT"), dtype="datetime64[D]")
    p_start = nat if pregnancy_start is None else np.asarray(pregnancy_start, dtype="datetime64[D]")
    p_end = nat if pregnancy_end is None else np.asarray(pregnancy_end, dtype="datetime64[D]")
    if p_start.shape != (n_people,) or p_end.shape != (n_people,):
        raise ValueError(f"pregnancy dates must have shape ({n_people},)")
    if np.any(~np.isnat(p_end) & np.isnat(p_start)):
        raise ValueError("a pregnancy end date needs a declaration date")
    if np.any(p_end < p_start):
        raise ValueError("a pregnancy ends before it was declared")
    return p_start, p_end
