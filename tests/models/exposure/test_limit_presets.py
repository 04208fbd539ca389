import math

import pytest

from models.core.codes import LevelKind, PeriodKind, Series, WorkerCategory
from models.exposure.presets import HANDS, PRESETS, InvestigationLevel, LimitRuleSpec, LimitSetSpec, preset

A, TR, PR, PU = (
    WorkerCategory.ADULT_WORKER,
    WorkerCategory.TRAINEE,
    WorkerCategory.DECLARED_PREGNANT,
    WorkerCategory.PUBLIC,
)
EFF, SKIN, LENS, FETUS = Series.EFFECTIVE, Series.SKIN, Series.LENS, Series.FETUS
YEAR, BLOCK, ROLL5, PREG = (
    PeriodKind.YEAR,
    PeriodKind.FIVE_YEAR_BLOCK,
    PeriodKind.ROLLING_FIVE_YEARS,
    PeriodKind.PREGNANCY,
)
MEMORY = "from memory"

# (preset, category, series, period, limit mSv, text the clause must contain); source beside each.
LIMITS = [
    ("icrp103", A, EFF, BLOCK, 100, "ICRP Publication 103, Table 6"),  # REFERENCE: ICRP 103 Table 6, 100 in 5 defined years
    ("icrp103", A, EFF, YEAR, 50, "ICRP Publication 103, Table 6"),  # REFERENCE: ICRP 103 Table 6, 50 in a single year
    ("icrp103", A, LENS, BLOCK, 100, "ICRP Publication 118"),  # REFERENCE: ICRP 118 statement on tissue reactions
    ("icrp103", A, LENS, YEAR, 50, "ICRP Publication 118"),  # REFERENCE: ICRP 118 statement on tissue reactions
    ("icrp103", A, SKIN, YEAR, 500, "ICRP Publication 103, Table 6"),  # REFERENCE: ICRP 103 Table 6, skin
    ("icrp103", A, HANDS, YEAR, 500, "Table 6 (hands and feet)"),  # REFERENCE: ICRP 103 Table 6, hands and feet
    ("icrp103", PR, FETUS, PREG, 1, "para 186"),  # REFERENCE: ICRP 103 para 186, "about 1"
    ("icrp103", PU, EFF, YEAR, 1, "Table 6 (public)"),  # REFERENCE: ICRP 103 Table 6, public effective
    ("icrp103", PU, LENS, YEAR, 15, "Table 6 (public)"),  # REFERENCE: ICRP 103 Table 6, public lens
    ("icrp103", PU, SKIN, YEAR, 50, "Table 6 (public)"),  # REFERENCE: ICRP 103 Table 6, public skin
    ("euratom2013", A, EFF, YEAR, 20, "Art. 9(2)"),  # REFERENCE: 2013/59/Euratom Art. 9(2)
    ("euratom2013", A, EFF, ROLL5, 100, "Art. 9(2)"),  # REFERENCE: Art. 9(2), 5 consecutive years average <= 20
    ("euratom2013", A, LENS, YEAR, 20, "Art. 9(3)(a)"),  # REFERENCE: Art. 9(3)(a)
    ("euratom2013", A, LENS, ROLL5, 100, "Art. 9(3)(a)"),  # REFERENCE: Art. 9(3)(a), 100 in any 5 consecutive years
    ("euratom2013", A, SKIN, YEAR, 500, "Art. 9(3)(b)"),  # REFERENCE: Art. 9(3)(b)
    ("euratom2013", A, HANDS, YEAR, 500, "Art. 9(3)(c)"),  # REFERENCE: Art. 9(3)(c)
    ("euratom2013", PR, FETUS, PREG, 1, "Art. 10(1)"),  # REFERENCE: Art. 10(1)
    ("euratom2013", TR, EFF, YEAR, 6, "Art. 11(2)"),  # REFERENCE: Art. 11(2)
    # 2013/59/Euratom Art. 11(3): "(a) the equivalent dose limit for the lens of the eye shall be
    # 15 mSv in a year; (b) ... for the skin shall be 150 mSv in a year, averaged over any area of
    # 1 cm2 ...; (c) ... for the extremities shall be 150 mSv in a year" (REFERENCE.md, corrected).
    ("euratom2013", TR, LENS, YEAR, 15, "Art. 11(3)(a)"),
    ("euratom2013", TR, SKIN, YEAR, 150, "Art. 11(3)(b)"),
    ("euratom2013", TR, HANDS, YEAR, 150, "Art. 11(3)(c)"),
    ("euratom2013", PU, EFF, YEAR, 1, "Art. 12"),  # REFERENCE: Art. 12
    ("euratom2013", PU, LENS, YEAR, 15, "Art. 12"),  # REFERENCE: Art. 12
    ("euratom2013", PU, SKIN, YEAR, 50, "Art. 12"),  # REFERENCE: Art. 12
    ("cfr10_20", A, EFF, YEAR, 50, "20.1201(a)(1)(i), (c)"),  # REFERENCE: 10 CFR 20.1201(a)(1)(i), (c)
    ("cfr10_20", A, LENS, YEAR, 150, "20.1201(a)(2)(i)"),  # REFERENCE: 10 CFR 20.1201(a)(2)(i)
    ("cfr10_20", A, SKIN, YEAR, 500, "20.1201(a)(2)(ii)"),  # REFERENCE: 10 CFR 20.1201(a)(2)(ii), skin
    ("cfr10_20", A, HANDS, YEAR, 500, "20.1201(a)(2)(ii)"),  # REFERENCE: 10 CFR 20.1201(a)(2)(ii), any extremity
    ("cfr10_20", TR, EFF, YEAR, 5, "20.1207"),  # REFERENCE: 10 CFR 20.1207, 10 % of 50
    ("cfr10_20", TR, LENS, YEAR, 15, "20.1207"),  # REFERENCE: 10 CFR 20.1207, 10 % of 150
    ("cfr10_20", TR, SKIN, YEAR, 50, "20.1207"),  # REFERENCE: 10 CFR 20.1207, 10 % of 500
    ("cfr10_20", TR, HANDS, YEAR, 50, "20.1207"),  # REFERENCE: 10 CFR 20.1207, 10 % of 500
    ("cfr10_20", PR, FETUS, PREG, 5, "20.1208(a)"),  # REFERENCE: 10 CFR 20.1208(a)
    ("cfr10_20", PU, EFF, YEAR, 1, "20.1301(a)(1)"),  # REFERENCE: 10 CFR 20.1301(a)(1)
    ("irr17", A, EFF, YEAR, 20, "IRR17 Schedule 3"),  # REFERENCE: IRR17 Schedule 3, employee effective
    ("irr17", A, LENS, YEAR, 20, "IRR17 Schedule 3"),  # REFERENCE: IRR17 Schedule 3, employee lens
    ("irr17", A, SKIN, YEAR, 500, MEMORY),  # not in REFERENCE: IRR17 Schedule 3, from memory
    ("irr17", A, HANDS, YEAR, 500, MEMORY),  # not in REFERENCE: IRR17 Schedule 3, from memory
    ("irr17", TR, EFF, YEAR, 6, "IRR17 Schedule 3 (trainees"),  # REFERENCE: IRR17 Schedule 3, trainee
    ("irr17", TR, LENS, YEAR, 15, "IRR17 Schedule 3 (trainees"),  # REFERENCE: IRR17 Schedule 3, trainee
    ("irr17", TR, SKIN, YEAR, 150, "IRR17 Schedule 3 (trainees"),  # REFERENCE: IRR17 Schedule 3, trainee
    ("irr17", TR, HANDS, YEAR, 150, "IRR17 Schedule 3 (trainees"),  # REFERENCE: IRR17 Schedule 3, trainee
    ("irr17", PR, FETUS, PREG, 1, MEMORY),  # not in REFERENCE: IRR17 reg. 9(6), from memory
    ("irr17", PU, EFF, YEAR, 1, MEMORY),  # not in REFERENCE: IRR17 Schedule 3 other persons, from memory
    ("irr17", PU, LENS, YEAR, 15, MEMORY),  # not in REFERENCE: IRR17 Schedule 3 other persons, from memory
    ("irr17", PU, SKIN, YEAR, 50, MEMORY),  # not in REFERENCE: IRR17 Schedule 3 other persons, from memory
]

# Quarterly (preset, category, series, level I, level II) in mSv. Source of all: REFERENCE,
# investigation levels, common practice 1.25 / 3.75 mSv Hp(10) per quarter, scaled by the
# series' annual limit over the set's Hp(10) annual limit (the ratio is beside each row).
LEVELS = [
    ("icrp103", A, EFF, 1.25, 3.75),  # 50 / 50
    ("icrp103", A, LENS, 1.25, 3.75),  # 50 / 50
    ("icrp103", A, SKIN, 12.5, 37.5),  # 500 / 50
    ("icrp103", A, HANDS, 12.5, 37.5),  # 500 / 50
    ("euratom2013", A, EFF, 1.25, 3.75),  # 20 / 20
    ("euratom2013", A, LENS, 1.25, 3.75),  # 20 / 20
    ("euratom2013", A, SKIN, 31.25, 93.75),  # 500 / 20
    ("euratom2013", A, HANDS, 31.25, 93.75),  # 500 / 20
    ("euratom2013", TR, EFF, 0.375, 1.125),  # 6 / 20
    ("euratom2013", TR, LENS, 0.9375, 2.8125),  # 15 / 20
    ("euratom2013", TR, SKIN, 9.375, 28.125),  # 150 / 20
    ("euratom2013", TR, HANDS, 9.375, 28.125),  # 150 / 20
    ("cfr10_20", A, EFF, 1.25, 3.75),  # 50 / 50
    ("cfr10_20", A, LENS, 3.75, 11.25),  # 150 / 50
    ("cfr10_20", A, SKIN, 12.5, 37.5),  # 500 / 50
    ("cfr10_20", A, HANDS, 12.5, 37.5),  # 500 / 50
    ("cfr10_20", TR, EFF, 0.125, 0.375),  # 5 / 50
    ("cfr10_20", TR, LENS, 0.375, 1.125),  # 15 / 50
    ("cfr10_20", TR, SKIN, 1.25, 3.75),  # 50 / 50
    ("cfr10_20", TR, HANDS, 1.25, 3.75),  # 50 / 50
    ("irr17", A, EFF, 1.25, 3.75),  # 20 / 20
    ("irr17", A, LENS, 1.25, 3.75),  # 20 / 20
    ("irr17", A, SKIN, 31.25, 93.75),  # 500 / 20
    ("irr17", A, HANDS, 31.25, 93.75),  # 500 / 20
    ("irr17", TR, EFF, 0.375, 1.125),  # 6 / 20
    ("irr17", TR, LENS, 0.9375, 2.8125),  # 15 / 20
    ("irr17", TR, SKIN, 9.375, 28.125),  # 150 / 20
    ("irr17", TR, HANDS, 9.375, 28.125),  # 150 / 20
]


def _each_hand(rows):
    """Rows with HANDS expanded to one row per hand series (the limit applies to each extremity)."""
    return [
        (key, category, s, *rest)
        for key, category, series, *rest in rows
        for s in (series if isinstance(series, tuple) else (series,))
    ]


def _rule(key, category, series, period) -> LimitRuleSpec:
    (rule,) = [
        r
        for r in preset(key).rules
        if (r.category, r.series, r.period) == (category, series, period)
    ]
    return rule


@pytest.mark.parametrize("key, category, series, period, limit, clause", _each_hand(LIMITS))
def test_limit(key, category, series, period, limit, clause):
    rule = _rule(key, category, series, period)
    assert rule.limit_msv == limit
    assert clause in rule.clause
    if category not in (PR, PU):  # fetal and public rules carry local-choice levels (below)
        assert rule.level1 is None and rule.level2 is None


@pytest.mark.parametrize("key, category, series, level1, level2", _each_hand(LEVELS))
def test_quarterly_investigation_levels(key, category, series, level1, level2):
    rule = _rule(key, category, series, PeriodKind.QUARTER)
    assert rule.limit_msv is None
    assert rule.level1.kind is rule.level2.kind is LevelKind.ABSOLUTE
    assert (rule.level1.value, rule.level2.value) == pytest.approx((level1, level2))
    assert rule.clause.startswith("common practice")


@pytest.mark.parametrize("limit_set", PRESETS, ids=lambda s: s.key)
def test_every_rule_is_checked_above(limit_set):
    rows = {(c, s, p) for key, c, s, p, *_ in _each_hand(LIMITS) if key == limit_set.key}
    rows |= {(c, s, PeriodKind.QUARTER) for key, c, s, *_ in _each_hand(LEVELS) if key == limit_set.key}
    assert {(r.category, r.series, r.period) for r in limit_set.rules} == rows


def test_values_from_memory_say_so():
    remembered = {(key, c, s, p) for key, c, s, p, _, clause in _each_hand(LIMITS) if clause == MEMORY}
    marked = {
        (limit_set.key, r.category, r.series, r.period)
        for limit_set in PRESETS
        for r in limit_set.rules
        if MEMORY in r.clause
    }
    assert marked == remembered


def test_preset_lookup():
    assert [s.key for s in PRESETS] == ["icrp103", "euratom2013", "cfr10_20", "irr17"]
    assert preset("irr17") is PRESETS[3]
    with pytest.raises(KeyError):
        preset("nrc")


@pytest.mark.parametrize(
    "level, limit, expected",
    [
        (InvestigationLevel(LevelKind.FRACTION, 0.25), 20.0, 5.0),
        (InvestigationLevel("absolute", 1.25), None, 1.25),
        (InvestigationLevel("absolute", 1.25), 20.0, 1.25),
    ],
)
def test_investigation_level_msv(level, limit, expected):
    assert level.msv(limit) == expected


def test_rule_thresholds():
    rule = LimitRuleSpec(A, EFF, YEAR, 20, InvestigationLevel("fraction", 0.3), None, clause="local rule")
    assert rule.thresholds()[0] == pytest.approx(6.0)
    assert math.isnan(rule.thresholds()[1]) and rule.thresholds()[2] == 20.0


@pytest.mark.parametrize(
    "make",
    [
        lambda: LimitRuleSpec(A, EFF, YEAR, 20),  # no clause
        lambda: LimitRuleSpec(A, EFF, YEAR, None, clause="x"),  # neither limit nor level
        lambda: LimitRuleSpec(A, EFF, YEAR, None, InvestigationLevel("fraction", 0.5), clause="x"),
        lambda: LimitRuleSpec(A, EFF, YEAR, 20, InvestigationLevel("absolute", 25), clause="x"),
        lambda: LimitRuleSpec(
            A, EFF, YEAR, 20, InvestigationLevel("absolute", 8), InvestigationLevel("absolute", 4), clause="x"
        ),
        lambda: InvestigationLevel("fraction", 1.5),
        lambda: InvestigationLevel("absolute", 0),
        lambda: LimitSetSpec("x", "x", (LimitRuleSpec(A, EFF, YEAR, 20, clause="x"),) * 2),
    ],
)
def test_invalid_rules(make):
    with pytest.raises(ValueError):
        make()


FETAL_AND_PUBLIC = [
    (key, rule.category, rule.series, rule.period)
    for key in ("icrp103", "euratom2013", "cfr10_20", "irr17")
    for rule in preset(key).rules
    if rule.category in (PR, PU)
]
# The set's Hp(10) annual worker limit: ICRP 103 Table 6 50; 2013/59/Euratom Art. 9(2) 20;
# 10 CFR 20.1201(a)(1)(i) 50; IRR17 Schedule 3 20 (REFERENCE.md).
HP10_ANNUAL = {"icrp103": 50, "euratom2013": 20, "cfr10_20": 50, "irr17": 20}


@pytest.mark.parametrize("key, category, series, period", FETAL_AND_PUBLIC)
def test_every_fetal_and_public_rule_has_local_choice_levels(key, category, series, period):
    rule = _rule(key, category, series, period)
    # No published investigation level: the worker rules' quarterly fractions, e.g. for ICRP 103
    # 1.25 / 50 = 2.5 % and 3.75 / 50 = 7.5 % of the limit; for 2013/59/Euratom 6.25 % / 18.75 %.
    level1, level2, limit = rule.thresholds()
    assert level1 == pytest.approx(limit * 1.25 / HP10_ANNUAL[key])
    assert level2 == pytest.approx(limit * 3.75 / HP10_ANNUAL[key])
    assert "local choice" in rule.clause


def test_the_preset_fetal_and_public_rules_are_all_there():
    # ICRP 103: fetus + 3 public; Euratom: fetus + 3 public (Art. 10, 12); 10 CFR: fetus + public
    # effective (20.1208(a), 20.1301(a)(1)); IRR17: fetus + 3 other persons.
    assert len(FETAL_AND_PUBLIC) == 4 + 4 + 2 + 4
