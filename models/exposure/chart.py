"""A person's dose history for their exposure page: monthly sums, the calendar year's running
total, the fetal window month by month, and the dose records with their versions.

Every sum goes through the engine (one person, one evaluation date per month end), so the chart
follows the same proration, MRD and lens policies as the table beside it.
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date

import numpy as np
from dateutil.relativedelta import relativedelta

from models.core.codes import PeriodKind, Series, code
from models.doses.tables import DoseRecord
from models.exposure.engine import DoseRecords, Policies, compute_doses

CHART_MONTHS = 24


@dataclass(frozen=True)
class MonthlyDose:
    """(M,) arrays, one entry per calendar month, oldest first; doses in mSv counted up to `on`.

    year_to_date: the calendar year's total at the month's end (or at `on` for the last month).
    missing: results without a dose yet in that month.
    """

    on: date
    months: list[date]
    dose: np.ndarray
    year_to_date: np.ndarray
    missing: np.ndarray


def engine_records(records: Sequence[DoseRecord]) -> DoseRecords:
    """One person's records in force as engine columns (all at person index 0)."""
    return DoseRecords(
        person=np.zeros(len(records), dtype=np.int64),
        quantity=np.asarray([str(r.quantity) for r in records], dtype=str),
        location=np.asarray([str(r.location) for r in records], dtype=str),
        wear_start=np.asarray([r.wear_start for r in records], dtype="datetime64[D]"),
        wear_end=np.asarray([r.wear_end for r in records], dtype="datetime64[D]"),
        value=np.asarray([np.nan if r.value_msv is None else r.value_msv for r in records],
                         dtype=float),
        result=np.asarray([str(r.result) for r in records], dtype=str),
        mrd=np.asarray([np.nan if r.mrd_msv is None else r.mrd_msv for r in records], dtype=float),
    )


def month_starts(on: date, months: int) -> list[date]:
    """First days of the `months` calendar months ending with the month of `on`, oldest first."""
    first = on.replace(day=1)
    return [first - relativedelta(months=k) for k in reversed(range(months))]


def _month_end(start: date, on: date) -> date:
    """The last counted day of the month starting `start`: its end, or `on` if that is earlier."""
    return min(start + relativedelta(months=1, days=-1), on)


def monthly_dose(
    records: DoseRecords,
    on: date,
    policies: Policies,
    series: Series = Series.EFFECTIVE,
    months: int = CHART_MONTHS,
) -> MonthlyDose:
    """One series' dose per calendar month over the last `months` months, and the year's total."""
    starts = month_starts(on, months)
    s, month, year = code(series), code(PeriodKind.MONTH), code(PeriodKind.YEAR)
    dose, year_to_date, missing = [], [], []
    for start in starts:
        totals = compute_doses(records, 1, _month_end(start, on), policies)
        dose.append(totals.dose[0, s, month])
        year_to_date.append(totals.dose[0, s, year])
        missing.append(totals.missing[0, s, month])
    return MonthlyDose(on, starts, np.array(dose), np.array(year_to_date), np.array(missing))


def fetal_months(
    records: DoseRecords, on: date, policies: Policies, declared_on: date, ended_on: date | None
) -> MonthlyDose:
    """Fetal dose in each month of a declared pregnancy, from its declaration up to `on`.

    year_to_date holds the running total since the window's start (what the fetal limit applies
    to). Each day reads the abdomen dosimeter if one was worn, else whole body, as the engine does.
    """
    start = np.array([declared_on], dtype="datetime64[D]")
    end = np.array([ended_on or np.datetime64("NaT")], dtype="datetime64[D]")
    s, t = code(Series.FETUS), code(PeriodKind.PREGNANCY)
    starts = month_starts(on, (on.year - declared_on.year) * 12 + on.month - declared_on.month + 1)
    since, missing = [], []
    for first in starts:
        totals = compute_doses(records, 1, _month_end(first, on), policies, start, end)
        since.append(totals.dose[0, s, t])
        missing.append(totals.missing[0, s, t])
    since = np.array(since)
    dose = np.diff(since, prepend=0.0)
    # Missing results are counted per window, so a month's own count is the rise since the last.
    return MonthlyDose(on, starts, dose, since, np.diff(np.array(missing), prepend=0))
