"""The safety officer's overview of everyone's dose: people x main series for the year and quarter.

The fetal series is left out on purpose: a pregnancy shows only on the person's own exposure page.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from models.core.codes import Level, PeriodKind, Series, code
from models.exposure.evaluation import NO_LIMIT, NO_RESULT, UNASSESSED, Evaluation, row_level

MAIN_SERIES = (Series.EFFECTIVE, Series.SKIN, Series.LENS, Series.WORST_HAND)
OVERVIEW_PERIODS = (PeriodKind.YEAR, PeriodKind.QUARTER)
COLUMNS = tuple(f"{s}_{t}" for s in MAIN_SERIES for t in OVERVIEW_PERIODS)
SORT_KEYS = ("name", "login", "level", *COLUMNS)


@dataclass(frozen=True)
class Cell:
    """One series x period of one person; no dose where no result of its dosimeter is in the period."""

    dose_msv: float | None
    limit_msv: float | None
    fraction: float | None
    level: str  # a Level, or evaluation.NO_LIMIT / NO_RESULT where nothing was assessed
    missing: int


@dataclass(frozen=True)
class OverviewRow:
    """One person's line: their worst level over the shown cells, and the cells by column key."""

    person_id: int
    login: str
    name: str
    level: str
    cells: dict[str, Cell]


_UNASSESSED_RANK = {NO_RESULT: -1.0, NO_LIMIT: 0.5}


def _rank(level: str) -> float:
    """Where a level sorts: a missing limit beside level I (it needs the officer), no result first."""
    return _UNASSESSED_RANK[level] if level in _UNASSESSED_RANK else float(code(Level(level)))


def _worst(levels: list[str]) -> str:
    """The worst assessed level of a line; where none was assessed, why (a missing limit first)."""
    assessed = [level for level in levels if level not in UNASSESSED]
    if assessed:
        return max(assessed, key=_rank)
    return NO_LIMIT if NO_LIMIT in levels else NO_RESULT


def _optional(value: float) -> float | None:
    """None for NaN (no limit applies)."""
    return None if np.isnan(value) else float(value)


def overview_rows(evaluation: Evaluation, rows: np.ndarray, people: list[tuple[int, str, str]]
                  ) -> list[OverviewRow]:
    """Lines for `people` (id, login, name), whose positions in the evaluation are `rows`."""
    s = [code(x) for x in MAIN_SERIES]
    t = [code(x) for x in OVERVIEW_PERIODS]
    pick = np.ix_(rows, s, t)
    totals = evaluation.totals
    dose, limit = totals.dose[pick], evaluation.limit[pick]
    fraction, missing = evaluation.fraction[pick], totals.missing[pick]
    lines = []
    for i, (person_id, login, name) in enumerate(people):
        cells = {}
        for a, series in enumerate(MAIN_SERIES):
            for b, period in enumerate(OVERVIEW_PERIODS):
                level = row_level(evaluation, (rows[i], s[a], t[b]))
                cells[f"{series}_{period}"] = Cell(
                    float(dose[i, a, b]) if totals.reported[rows[i], s[a], t[b]] else None,
                    _optional(limit[i, a, b]), None if level == NO_RESULT else _optional(fraction[i, a, b]),
                    level, int(missing[i, a, b]))
        lines.append(OverviewRow(person_id, login, name, _worst([c.level for c in cells.values()]), cells))
    return lines


def sort_rows(lines: list[OverviewRow], key: str, descending: bool) -> list[OverviewRow]:
    """Lines sorted by a SORT_KEYS key; names break ties so the order is stable and readable."""
    if key not in SORT_KEYS:
        key = "name"
    by_name = sorted(lines, key=lambda line: (line.name.lower(), line.login))
    if key in ("name", "login"):
        value = (lambda line: line.name.lower()) if key == "name" else (lambda line: line.login)
    elif key == "level":
        def value(line):
            """Level, then the highest fraction of a limit."""
            worst = max((c.fraction or 0.0 for c in line.cells.values()), default=0.0)
            return _rank(line.level), worst
    else:
        def value(line):
            """The column's dose; cells without a result sort below every dose."""
            dose = line.cells[key].dose_msv
            return dose is not None, dose or 0.0
    return sorted(by_name, key=value, reverse=descending)


def _cell_text(text: str) -> str:
    """Text a spreadsheet will not run as a formula."""
    return "'" + text if text[:1] in ("=", "+", "-", "@") else text


def csv_table(lines: list[OverviewRow]) -> list[list]:
    """The overview as CSV rows (header first), doses in mSv whatever the display unit."""
    header = ["login", "name", "worst_level"]
    for column in COLUMNS:
        header += [f"{column}_dose_msv", f"{column}_limit_msv", f"{column}_percent",
                   f"{column}_level", f"{column}_missing"]
    table = [header]
    for line in lines:
        row = [_cell_text(line.login), _cell_text(line.name), str(line.level)]
        for column in COLUMNS:
            cell = line.cells[column]
            row += ["" if cell.dose_msv is None else f"{cell.dose_msv:.4f}",
                    "" if cell.limit_msv is None else f"{cell.limit_msv:g}",
                    "" if cell.fraction is None else f"{100 * cell.fraction:.1f}",
                    str(cell.level), cell.missing]
        table.append(row)
    return table
