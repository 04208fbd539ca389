"""Evaluation of engine doses against a limit set: limits, levels, projection, rows per person.

Arrays are (P, S, T) like DoseTotals.dose. Decisions:
- Level ladder: below_1 < level_1 (dose >= level I) < level_2 (>= level II) < limit_reached
  (>= 100 % of the limit). A row without a limit takes its level from absolute levels only.
- Fail closed: a row that no rule of the set covers for the person's category is reported with
  the level `no_limit` ("no limit in this set"), never `below_1`, since nothing was assessed; a row
  with no result in the period of a dosimeter it reads (for the lens and fetus, a stand-in's too):
  none worn or none reported yet, with the level `no_result` and no dose, never 0 mSv.
- projected_msv = dose / elapsed days * total days of the period. Rolling windows (and an open
  pregnancy) end on the evaluation date, so their projection equals their dose.
- A person with a pregnancy window also gets the declared_pregnant rules; where two rules cover
  one row, the lower limit wins.
"""
from dataclasses import dataclass, replace

import numpy as np

from models.core.codes import Level, Location, PeriodKind, Quantity, Series, WorkerCategory, code, encode
from models.exposure.engine import DoseTotals
from models.exposure.presets import DECLARATION_ALLOWANCE_CLAUSE, LimitSetSpec

# Float sums of prorated parts must not drop a dose that sits exactly on a threshold.
TOLERANCE_MSV = 1e-9
# The level reported for a row no rule covers; not a Level, since it is not a place on the ladder.
NO_LIMIT = "no_limit"
# The level reported for a row with no result of a dosimeter it reads in the period (none worn,
# or none reported yet): its zero is not a dose.
NO_RESULT = "no_result"
UNASSESSED = (NO_LIMIT, NO_RESULT)

_NON_FETAL = [code(s) for s in Series if s is not Series.FETUS]
_NON_PREGNANCY = [code(t) for t in PeriodKind if t is not PeriodKind.PREGNANCY]
# Rows every person gets (where the window exists), besides any row a rule covers.
REPORTED = np.zeros((len(Series), len(PeriodKind)), dtype=bool)
REPORTED[np.ix_(_NON_FETAL, _NON_PREGNANCY)] = True
REPORTED[code(Series.FETUS), code(PeriodKind.PREGNANCY)] = True


@dataclass(frozen=True)
class Evaluation:
    """Doses with their rules, levels and projections; (P, S, T) arrays, NaN where not applicable.

    rule: index into limit_set.rules, -1 for none. level, projected_level: Level codes.
    allowance: (P,) the person's fetal limit was raised by the declaration allowance (10 CFR 20.1208(d)).
    """

    totals: DoseTotals
    limit_set: LimitSetSpec
    rule: np.ndarray
    level1: np.ndarray
    level2: np.ndarray
    limit: np.ndarray
    fraction: np.ndarray
    remaining: np.ndarray
    level: np.ndarray
    projected: np.ndarray
    projected_level: np.ndarray
    allowance: np.ndarray


def rule_index(limit_set: LimitSetSpec, categories: np.ndarray, pregnant: np.ndarray) -> np.ndarray:
    """(P, S, T) index of the rule applying to each row, -1 for none.

    categories: (P,) WorkerCategory codes; pregnant: (P,) bool, the person has a pregnancy window.
    """
    table = np.full((len(WorkerCategory), len(Series), len(PeriodKind)), -1, dtype=np.int64)
    for i, rule in enumerate(limit_set.rules):
        table[code(rule.category), code(rule.series), code(rule.period)] = i
    # The extra last entry is what index -1 reads: no rule, no limit.
    strictness = np.array([_or_inf(r.limit_msv) for r in limit_set.rules] + [np.inf])
    own = table[categories]
    extra = table[code(WorkerCategory.DECLARED_PREGNANT)]
    stricter = strictness[extra] < strictness[own]
    take = pregnant[:, None, None] & (extra >= 0) & ((own < 0) | stricter)
    return np.where(take, extra, own)


def _or_inf(limit_msv: float | None) -> float:
    """A limit, or infinity for a rule without one."""
    return np.inf if limit_msv is None else limit_msv


def level_codes(
    dose: np.ndarray, level1: np.ndarray, level2: np.ndarray, limit: np.ndarray
) -> np.ndarray:
    """Level codes of doses against thresholds (NaN threshold: not set; NaN dose: below_1)."""
    dose = dose + TOLERANCE_MSV
    return np.select(
        [dose >= limit, dose >= level2, dose >= level1],
        [code(Level.LIMIT_REACHED), code(Level.LEVEL_2), code(Level.LEVEL_1)],
        code(Level.BELOW_1),
    ).astype(np.int8)


def evaluate(totals: DoseTotals, limit_set: LimitSetSpec, categories) -> Evaluation:
    """Evaluate all people at once; categories: (P,) WorkerCategory values or codes."""
    categories = np.asarray(categories)
    if categories.dtype.kind not in "iu":
        categories = encode(WorkerCategory, categories)
    if categories.shape != (totals.dose.shape[0],):
        raise ValueError("one worker category per person")
    pregnant = totals.windows.exists[:, code(PeriodKind.PREGNANCY)]
    rule = rule_index(limit_set, categories.astype(np.int64), pregnant)
    thresholds = np.array([r.thresholds() for r in limit_set.rules] + [(np.nan,) * 3])
    level1, level2, limit = (thresholds[:, i][rule] for i in range(3))
    return graded(totals, limit_set, rule, level1, level2, limit)


def graded(totals: DoseTotals, limit_set: LimitSetSpec, rule: np.ndarray, level1: np.ndarray,
           level2: np.ndarray, limit: np.ndarray) -> Evaluation:
    """The evaluation of doses against the thresholds already chosen for each row."""
    dose = totals.dose
    projected = dose / totals.windows.elapsed_fraction[:, None, :]
    return Evaluation(
        totals=totals,
        limit_set=limit_set,
        rule=rule,
        level1=level1,
        level2=level2,
        limit=limit,
        fraction=dose / limit,
        remaining=np.maximum(limit - dose, 0.0),
        level=level_codes(dose, level1, level2, limit),
        projected=projected,
        projected_level=level_codes(projected, level1, level2, limit),
        allowance=np.zeros(dose.shape[0], dtype=bool),
    )


def with_declaration_allowance(evaluation: Evaluation, before: np.ndarray, allowance_msv: float) -> Evaluation:
    """The fetal limit raised for people whose fetal dose by the declaration was within
    `allowance_msv` of it (or over it): they may receive `allowance_msv` more (10 CFR 20.1208(d)).
    Their fetal row cites that clause beside the rule's own.

    before: (P,) fetal dose counted before the declaration (NaN or 0 for none).
    """
    s, t = code(Series.FETUS), code(PeriodKind.PREGNANCY)
    limit = evaluation.limit.copy()
    near = np.nan_to_num(before, nan=0.0) + TOLERANCE_MSV >= limit[:, s, t] - allowance_msv
    if not near.any():
        return evaluation
    limit[near, s, t] = np.maximum(limit[near, s, t], before[near] + allowance_msv)
    return replace(graded(evaluation.totals, evaluation.limit_set, evaluation.rule, evaluation.level1,
                          evaluation.level2, limit), allowance=near)


def person_rows(evaluation: Evaluation, person: int) -> list[dict]:
    """One plain dict per series x period shown for this person, ready for JSON."""
    totals = evaluation.totals
    windows = totals.windows
    shown = (REPORTED | (evaluation.rule[person] >= 0)) & windows.exists[person][None, :]
    rows = []
    for s, t in zip(*np.nonzero(shown)):
        at = (person, s, t)
        level = row_level(evaluation, at)
        assessed = level not in UNASSESSED
        rows.append(
            {
                "quantity": str(_member(Quantity, totals.quantity[person, s])),
                "location": str(_member(Location, totals.location[at])),
                "period": str(_member(PeriodKind, t)),
                "start": str(windows.start[person, t]),
                "end": str(windows.end[person, t]),
                "dose_msv": float(totals.dose[at]) if totals.reported[at] else None,
                "limit_msv": _number(evaluation.limit[at]),
                "fraction": _number(evaluation.fraction[at]) if assessed else None,
                "level": level,
                "projected_msv": float(evaluation.projected[at]) if totals.reported[at] else None,
                "series": str(_member(Series, s)),
                "remaining_msv": _number(evaluation.remaining[at]) if assessed else None,
                "projected_level": row_level(evaluation, at, projected=True),
                "clause": _clause(evaluation, at),
                "stand_in": bool(totals.stand_in[at]),
            }
        )
    return rows


def row_level(evaluation: Evaluation, at: tuple, projected: bool = False) -> str:
    """The level shown for one row: `no_limit` where no rule covers it, `no_result` where the
    period holds no result of a dosimeter it reads, else its place on the ladder."""
    if evaluation.rule[at] < 0:
        return NO_LIMIT
    if not evaluation.totals.reported[at]:
        return NO_RESULT
    return str(_member(Level, (evaluation.projected_level if projected else evaluation.level)[at]))


def _clause(evaluation: Evaluation, at: tuple) -> str | None:
    """The row's rule's clause, and the clause that raised its limit where one did."""
    rule = evaluation.rule[at]
    if rule < 0:
        return None
    person, s, t = at
    raised = evaluation.allowance[person]
    if raised and (s, t) == (code(Series.FETUS), code(PeriodKind.PREGNANCY)):
        return f"{evaluation.limit_set.rules[rule].clause}; {DECLARATION_ALLOWANCE_CLAUSE}"
    return evaluation.limit_set.rules[rule].clause


def _member(cls, position):
    """The member of a StrEnum class at an integer code."""
    return tuple(cls)[int(position)]


def _number(value: float) -> float | None:
    """A float, or None for NaN (not applicable)."""
    return None if np.isnan(value) else float(value)


@dataclass(frozen=True)
class WorstLevels:
    """Per person (P,) arrays for the safety officer's attention list.

    level, projected_level: worst Level codes over all rows; series, period: codes of the worst
    row (highest level, then highest fraction); fraction: highest fraction of a limit (NaN without
    limits); attention: people at level I or above or projected to cross a level, most severe first.
    """

    level: np.ndarray
    projected_level: np.ndarray
    series: np.ndarray
    period: np.ndarray
    fraction: np.ndarray
    attention: np.ndarray


def effective_limit_gaps(limit_set: LimitSetSpec, categories) -> list[WorkerCategory]:
    """The worker categories among `categories` for which the set has no effective-dose limit."""
    covered = {r.category for r in limit_set.rules if r.series is Series.EFFECTIVE and r.limit_msv is not None}
    return [c for c in WorkerCategory if c in set(map(WorkerCategory, categories)) and c not in covered]


def worst_levels(evaluation: Evaluation) -> WorstLevels:
    """Worst level of every person and the attention order, vectorised."""
    rows = (evaluation.level.shape[0], len(Series) * len(PeriodKind))
    level = evaluation.level.reshape(rows)
    projected_level = evaluation.projected_level.reshape(rows)
    fraction = evaluation.fraction.reshape(rows)
    worst = level.max(axis=1)
    # Among the rows at the worst level, the one nearest its limit; rows without a limit rank last.
    candidates = np.where(level == worst[:, None], np.nan_to_num(fraction, nan=-1.0), -np.inf)
    at = candidates.argmax(axis=1)
    best_fraction = np.fmax.reduce(fraction, axis=1)
    worst_projected = projected_level.max(axis=1)
    crossing = (projected_level > level).any(axis=1)
    needs = np.flatnonzero((worst > code(Level.BELOW_1)) | crossing)
    # lexsort sorts by its last key first: level, then projected level, then fraction, then person.
    order = np.lexsort(
        (
            needs,
            -np.nan_to_num(best_fraction[needs], nan=-1.0),
            -worst_projected[needs],
            -worst[needs],
        )
    )
    return WorstLevels(
        level=worst.astype(np.int8),
        projected_level=worst_projected.astype(np.int8),
        series=at // len(PeriodKind),
        period=at % len(PeriodKind),
        fraction=best_fraction,
        attention=needs[order],
    )
