import json
from datetime import date

import numpy as np
import pytest

from models.core.codes import Level, PeriodKind, Series, WorkerCategory, code, encode
from models.exposure.engine import DoseRecords, compute_doses
from models.exposure.evaluation import (
    NO_LIMIT,
    REPORTED,
    effective_limit_gaps,
    evaluate,
    level_codes,
    person_rows,
    rule_index,
    worst_levels,
)
from models.exposure.presets import InvestigationLevel, LimitRuleSpec, LimitSetSpec, preset

D = date
NAN = float("nan")
A, PR = WorkerCategory.ADULT_WORKER, WorkerCategory.DECLARED_PREGNANT
EFF, FETUS = Series.EFFECTIVE, Series.FETUS
YEAR, QUARTER, PREG = PeriodKind.YEAR, PeriodKind.QUARTER, PeriodKind.PREGNANCY

LOCAL = LimitSetSpec(
    "local",
    "a lab's own test set",
    (
        LimitRuleSpec(
            A,
            EFF,
            YEAR,
            20,
            InvestigationLevel("fraction", 0.25),  # 5 mSv
            InvestigationLevel("absolute", 10),
            clause="test: year",
        ),
        LimitRuleSpec(
            A,
            EFF,
            QUARTER,
            None,
            InvestigationLevel("absolute", 1.25),
            InvestigationLevel("absolute", 3.75),
            clause="test: quarter",
        ),
        LimitRuleSpec(PR, FETUS, PREG, 1, clause="test: fetus"),
    ),
)


def evaluated(doses, on, start=D(2024, 1, 1), end=D(2024, 1, 31), limit_set=LOCAL, declared=None,
              categories=None):
    """Evaluation of adults (or the given categories) with the records of `_whole_body`."""
    records = _whole_body(doses, start, end)
    pregnancy = None if declared is None else np.array(declared, dtype="datetime64[D]")
    totals = compute_doses(records, len(doses), on, pregnancy_start=pregnancy)
    return evaluate(totals, limit_set, categories or ["adult_worker"] * len(doses))


def _whole_body(doses, start, end) -> DoseRecords:
    """Person i has one measured Hp(10) whole-body record of doses[i] mSv."""
    n = len(doses)
    codes = (["Hp(10)"] * n, ["whole_body"] * n)
    return DoseRecords(np.arange(n), *codes, [start] * n, [end] * n, doses, ["measured"] * n, [NAN] * n)


def row(evaluation, person, series, period) -> dict:
    (found,) = [
        r for r in person_rows(evaluation, person) if (r["series"], r["period"]) == (series, period)
    ]
    return found


@pytest.mark.parametrize(
    "dose, level",
    [
        (0.0, Level.BELOW_1),
        (4.99, Level.BELOW_1),
        (5.0, Level.LEVEL_1),  # exactly at level I (25 % of 20)
        (9.99, Level.LEVEL_1),
        (10.0, Level.LEVEL_2),  # exactly at level II
        (19.99, Level.LEVEL_2),
        (20.0, Level.LIMIT_REACHED),  # exactly at the limit
        (25.0, Level.LIMIT_REACHED),
    ],
)
def test_level_boundaries(dose, level):
    result = row(evaluated([dose], D(2024, 12, 31)), 0, EFF, YEAR)
    assert result["level"] == level
    assert result["fraction"] == pytest.approx(dose / 20)


@pytest.mark.parametrize(
    "dose, level",
    [(1.2499, Level.BELOW_1), (1.25, Level.LEVEL_1), (3.75, Level.LEVEL_2), (400.0, Level.LEVEL_2)],
)
def test_absolute_levels_without_a_limit(dose, level):
    result = row(evaluated([dose], D(2024, 3, 31)), 0, EFF, QUARTER)
    assert result["level"] == level
    assert result["limit_msv"] is result["fraction"] is result["remaining_msv"] is None
    assert result["clause"] == "test: quarter"


def test_prorated_parts_exactly_at_a_level():
    # 14 of 31 days fall in 2024: the share is 1.25 mSv up to float rounding
    evaluation = evaluated([1.25 * 31 / 14], D(2024, 3, 31), D(2023, 12, 15), D(2024, 1, 14))
    assert row(evaluation, 0, EFF, QUARTER)["level"] == Level.LEVEL_1


def test_no_rule_at_all_is_no_limit_never_below_level_one():
    # Nothing was assessed against a rule: the row must not read as reassuring "below level I".
    result = row(evaluated([30.0], D(2024, 6, 30)), 0, EFF, PeriodKind.ROLLING_12_MONTHS)
    assert result["dose_msv"] == pytest.approx(30.0)
    assert result["limit_msv"] is result["fraction"] is result["clause"] is None
    assert result["level"] == result["projected_level"] == NO_LIMIT == "no_limit"


@pytest.mark.parametrize(
    "key, expected",
    [
        # ICRP 103 Table 6 has occupational and public limits only: no row for apprentices.
        ("icrp103", ["trainee"]),
        # 2013/59/Euratom Art. 9(2) workers, Art. 11(2) apprentices/students, Art. 12 public.
        ("euratom2013", []),
        # 10 CFR 20.1201 adults, 20.1207 minors, 20.1301 public.
        ("cfr10_20", []),
        # IRR17 Schedule 3: employees, trainees, other persons.
        ("irr17", []),
    ],
)
def test_categories_without_an_effective_limit(key, expected):
    assert effective_limit_gaps(preset(key), ["adult_worker", "trainee", "public"]) == expected


def test_a_trainee_under_icrp103_has_no_limit_rows():
    # 140 mSv to one hand by February (the example): ICRP 103 has no trainee rule, so the
    # rows say "no limit in this set" rather than "below level I".
    evaluation = evaluated([140.0], D(2024, 2, 29), D(2024, 1, 1), D(2024, 2, 29),
                           limit_set=preset("icrp103"), categories=["trainee"])
    assert row(evaluation, 0, EFF, YEAR)["level"] == "no_limit"


@pytest.mark.parametrize(
    "dose, level1, level2, limit, expected",
    [
        (30.0, NAN, NAN, NAN, Level.BELOW_1),
        (5.0, NAN, NAN, 5.0, Level.LIMIT_REACHED),
        (5.0, NAN, 4.0, NAN, Level.LEVEL_2),
        (NAN, 1.0, 2.0, 3.0, Level.BELOW_1),
        (3.0 - 1e-12, 1.0, 2.0, 3.0, Level.LIMIT_REACHED),  # float noise below a threshold
    ],
)
def test_level_codes(dose, level1, level2, limit, expected):
    codes = level_codes(*(np.array([v]) for v in (dose, level1, level2, limit)))
    assert codes.tolist() == [code(expected)]


# 1 mSv worn 1 to 10 April 2024, evaluated on 10 April 2024.
@pytest.mark.parametrize(
    "period, projected",
    [
        (YEAR, 366 / 101),
        (QUARTER, 91 / 10),
        (PeriodKind.MONTH, 30 / 10),
        (PeriodKind.FIVE_YEAR_BLOCK, 1826 / 1196),  # 2021-2025, 1196 days elapsed
        # rolling windows end on the evaluation date: the projection is the dose
        (PeriodKind.ROLLING_12_MONTHS, 1.0),
        (PeriodKind.ROLLING_FIVE_YEARS, 1.0),
    ],
)
def test_projection(period, projected):
    evaluation = evaluated([1.0], D(2024, 4, 10), D(2024, 4, 1), D(2024, 4, 10))
    assert row(evaluation, 0, EFF, period)["projected_msv"] == pytest.approx(projected)


def test_projection_of_an_open_pregnancy_is_its_dose():
    evaluation = evaluated([0.31], D(2024, 1, 31), declared=["2024-01-22"])
    result = row(evaluation, 0, FETUS, PREG)
    assert result["dose_msv"] == result["projected_msv"] == pytest.approx(0.1)


def test_projected_level_crossing():
    result = row(evaluated([6.0], D(2024, 4, 10), end=D(2024, 4, 10)), 0, EFF, YEAR)
    assert result["level"] == Level.LEVEL_1
    assert result["projected_msv"] == pytest.approx(6.0 * 366 / 101)
    assert result["projected_level"] == Level.LIMIT_REACHED


@pytest.mark.parametrize("dose, remaining", [(0.0, 20.0), (5.0, 15.0), (20.0, 0.0), (25.0, 0.0)])
def test_remaining(dose, remaining):
    result = row(evaluated([dose], D(2024, 12, 31)), 0, EFF, YEAR)
    assert result["remaining_msv"] == pytest.approx(remaining)


KEYS = {
    "quantity",
    "location",
    "period",
    "start",
    "end",
    "dose_msv",
    "limit_msv",
    "fraction",
    "level",
    "projected_msv",
    "series",
    "remaining_msv",
    "projected_level",
    "clause",
    "stand_in",
}


def test_person_rows_shape():
    evaluation = evaluated(
        [1.0, 1.0], D(2024, 5, 31), limit_set=preset("icrp103"), declared=["NaT", "2024-05-01"]
    )
    plain, pregnant = person_rows(evaluation, 0), person_rows(evaluation, 1)
    assert len(plain) == REPORTED.sum() - 1 == 36
    assert len(pregnant) == 37
    assert all(set(r) == KEYS for r in plain + pregnant)
    assert len({(r["series"], r["period"]) for r in pregnant}) == 37
    assert json.loads(json.dumps(pregnant)) == pregnant
    year = row(evaluation, 0, EFF, YEAR)
    assert (year["quantity"], year["location"], year["start"], year["end"]) == (
        "Hp(10)",
        "whole_body",
        "2024-01-01",
        "2024-12-31",
    )
    assert year["clause"].startswith("ICRP Publication 103, Table 6")
    fetus = row(evaluation, 1, FETUS, PREG)
    assert (fetus["start"], fetus["end"], fetus["limit_msv"]) == ("2024-05-01", "2024-05-31", 1.0)


@pytest.mark.parametrize(
    "own_limit, pregnancy_limit, expected",
    [(None, 1.0, 1.0), (2.0, 1.0, 1.0), (0.5, 1.0, 0.5)],
)
def test_pregnancy_rules_join_own_rules_and_the_lower_limit_wins(own_limit, pregnancy_limit, expected):
    own = () if own_limit is None else (LimitRuleSpec(A, FETUS, PREG, own_limit, clause="own"),)
    pregnancy = LimitRuleSpec(PR, FETUS, PREG, pregnancy_limit, clause="pregnancy")
    limit_set = LimitSetSpec("x", "x", own + (pregnancy,))
    categories = encode(WorkerCategory, ["adult_worker", "adult_worker"])
    index = rule_index(limit_set, categories, np.array([False, True]))[:, code(FETUS), code(PREG)]
    limits = [None if i < 0 else limit_set.rules[i].limit_msv for i in index]
    assert limits == [own_limit, expected]


def test_categories_as_codes_or_strings():
    totals = compute_doses(_whole_body([5.0, 5.0], D(2024, 1, 1), D(2024, 1, 31)), 2, D(2024, 12, 31))
    by_string = evaluate(totals, preset("euratom2013"), ["adult_worker", "trainee"])
    by_code = evaluate(totals, preset("euratom2013"), [code(A), code(WorkerCategory.TRAINEE)])
    assert (by_string.level == by_code.level).all()
    year = (slice(None), code(EFF), code(YEAR))
    assert by_string.limit[year].tolist() == [20.0, 6.0]


def test_worst_levels_order_the_attention_list():
    # on 30 June: year thresholds 5 / 10 / 20, and each January dose projects to about twice itself
    doses = [1.0, 6.0, 25.0, 3.0, 12.0, 22.0]
    worst = worst_levels(evaluated(doses, D(2024, 6, 30)))
    levels = (Level.BELOW_1, Level.LEVEL_1, Level.LIMIT_REACHED, Level.BELOW_1, Level.LEVEL_2)
    assert worst.level.tolist() == [code(level) for level in levels + (Level.LIMIT_REACHED,)]
    # limits reached (the higher fraction first), level II, level I, then projected only
    assert worst.attention.tolist() == [2, 5, 4, 1, 3]
    assert (worst.series[2], worst.period[2]) == (code(EFF), code(YEAR))
    assert worst.fraction[2] == pytest.approx(25.0 / 20)
    assert worst.projected_level[3] == code(Level.LEVEL_1)


def test_worst_levels_of_nobody():
    worst = worst_levels(evaluated([], D(2024, 6, 30)))
    assert worst.level.shape == worst.attention.shape == (0,)
