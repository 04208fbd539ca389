"""Limit sets: the rule types, and the presets shipped with the product, each value with its clause.

Sources are the rows of /work/shared/REFERENCE.md; a value not found there says "from memory" in
its clause. Rules name a Series (see dose_codes), which fixes the quantity and location.
"""
import math
from dataclasses import dataclass

from models.core.codes import LevelKind, PeriodKind, Series, WorkerCategory


@dataclass(frozen=True)
class InvestigationLevel:
    """Level I or II of a rule: a fraction of the rule's limit, or an absolute mSv per period."""

    kind: LevelKind
    value: float

    def __post_init__(self):
        object.__setattr__(self, "kind", LevelKind(self.kind))
        if not self.value > 0 or (self.kind is LevelKind.FRACTION and self.value > 1):
            raise ValueError(f"investigation level out of range: {self}")

    def msv(self, limit_msv: float | None) -> float:
        """Threshold in mSv for a rule with this limit."""
        if self.kind is LevelKind.ABSOLUTE:
            return self.value
        if limit_msv is None:
            raise ValueError("a level given as a fraction needs a limit")
        return self.value * limit_msv


@dataclass(frozen=True)
class LimitRuleSpec:
    """Limit and investigation levels for one worker category, series and period kind."""

    category: WorkerCategory
    series: Series
    period: PeriodKind
    limit_msv: float | None
    level1: InvestigationLevel | None = None
    level2: InvestigationLevel | None = None
    clause: str = ""

    def __post_init__(self):
        object.__setattr__(self, "category", WorkerCategory(self.category))
        object.__setattr__(self, "series", Series(self.series))
        object.__setattr__(self, "period", PeriodKind(self.period))
        if self.limit_msv is not None:
            object.__setattr__(self, "limit_msv", float(self.limit_msv))
        if not self.clause:
            raise ValueError("every rule names its source clause")
        if self.limit_msv is None and self.level1 is None and self.level2 is None:
            raise ValueError("a rule needs a limit or an investigation level")
        set_values = [v for v in self.thresholds() if not math.isnan(v)]
        if any(v <= 0 for v in set_values) or set_values != sorted(set_values):
            raise ValueError(f"thresholds must be positive, level I <= level II <= limit: {self}")

    def thresholds(self) -> tuple[float, float, float]:
        """(level I, level II, limit) in mSv, NaN where not set."""
        return (
            math.nan if self.level1 is None else self.level1.msv(self.limit_msv),
            math.nan if self.level2 is None else self.level2.msv(self.limit_msv),
            math.nan if self.limit_msv is None else self.limit_msv,
        )


# 10 CFR 20.1208(d): a dose at or within 0.05 rem (0.5 mSv) of the limit by the declaration allows
# 0.05 rem (0.5 mSv) more during the remainder of the pregnancy.
DECLARATION_ALLOWANCE_MSV = 0.5
DECLARATION_ALLOWANCE_CLAUSE = ("10 CFR 20.1208(d) (dose at or within 0.5 mSv of the limit by the declaration: "
                                "0.5 mSv more during the remainder of the pregnancy)")


@dataclass(frozen=True)
class LimitSetSpec:
    """A named set of rules; at most one rule per (category, series, period)."""

    key: str
    name: str
    rules: tuple[LimitRuleSpec, ...]
    # The fetal rule counts the whole pregnancy, from conception (10 CFR 20.1208(a)), rather than
    # from the declaration (ICRP 103 para 186, 2013/59/Euratom Art. 10); such a set also allows
    # DECLARATION_ALLOWANCE_MSV more after a declaration made near the limit (20.1208(d)).
    whole_pregnancy: bool = False

    def __post_init__(self):
        object.__setattr__(self, "rules", tuple(self.rules))
        seen = [(r.category, r.series, r.period) for r in self.rules]
        if len(seen) != len(set(seen)):
            raise ValueError(f"limit set {self.key!r} has two rules for one row")


ADULT = WorkerCategory.ADULT_WORKER
TRAINEE = WorkerCategory.TRAINEE
PREGNANT = WorkerCategory.DECLARED_PREGNANT
PUBLIC = WorkerCategory.PUBLIC
EFFECTIVE, SKIN, LENS, FETUS = Series.EFFECTIVE, Series.SKIN, Series.LENS, Series.FETUS
# The extremity limit applies to each hand; the worst hand carries it too so its row shows a limit.
HANDS = (Series.LEFT_HAND, Series.RIGHT_HAND, Series.WORST_HAND)
YEAR, BLOCK, ROLLING_5, PREGNANCY = (
    PeriodKind.YEAR,
    PeriodKind.FIVE_YEAR_BLOCK,
    PeriodKind.ROLLING_FIVE_YEARS,
    PeriodKind.PREGNANCY,
)

# Common practice, not a published limit: a university programme's quarterly Hp(10) levels,
# the old US quarterly figures (125 / 375 mrem).
COMMON_PRACTICE_QUARTERLY_MSV = (1.25, 3.75)
LEVEL_CLAUSE = (
    "common practice (not a published limit): 1.25 / 3.75 mSv Hp(10) per quarter, scaled by "
    "this series' annual limit over the set's Hp(10) annual limit"
)


def _limit(category, series, period, limit_msv, clause) -> tuple[LimitRuleSpec, ...]:
    """One rule, or one per hand series when `series` is HANDS."""
    return tuple(
        LimitRuleSpec(category, s, period, limit_msv, clause=clause)
        for s in (series if isinstance(series, tuple) else (series,))
    )


def _with_levels(rules: tuple[LimitRuleSpec, ...], hp10_annual_msv: float) -> tuple[LimitRuleSpec, ...]:
    """The rules plus quarterly common-practice levels for every worker and trainee annual limit, and
    levels on every fetal and public rule."""

    def scaled(level_msv: float, rule: LimitRuleSpec) -> InvestigationLevel:
        # Multiplying before dividing keeps the scaled values exact in binary.
        return InvestigationLevel(LevelKind.ABSOLUTE, level_msv * rule.limit_msv / hp10_annual_msv)

    level1, level2 = COMMON_PRACTICE_QUARTERLY_MSV
    # No published investigation level exists for the fetus or the public: the same fractions of
    # the limit as the worker rules' quarterly levels, on the rule's own period, as a local choice.
    fraction1, fraction2 = level1 / hp10_annual_msv, level2 / hp10_annual_msv
    local = (f"; levels I / II: local choice, {100 * fraction1:g} % / {100 * fraction2:g} % of the "
             f"limit (the worker rules' 1.25 / 3.75 mSv a quarter over {hp10_annual_msv:g} mSv a year)")
    rules = tuple(
        LimitRuleSpec(rule.category, rule.series, rule.period, rule.limit_msv,
                      InvestigationLevel(LevelKind.FRACTION, fraction1),
                      InvestigationLevel(LevelKind.FRACTION, fraction2), rule.clause + local)
        if rule.category in (PREGNANT, PUBLIC) else rule
        for rule in rules
    )
    levels = tuple(
        LimitRuleSpec(
            rule.category,
            rule.series,
            PeriodKind.QUARTER,
            None,
            level1=scaled(level1, rule),
            level2=scaled(level2, rule),
            clause=LEVEL_CLAUSE,
        )
        for rule in rules
        if rule.period is YEAR and rule.category in (ADULT, TRAINEE)
    )
    return rules + levels


def _icrp103() -> LimitSetSpec:
    """ICRP Publication 103 Table 6 with the ICRP 2011 lens statement."""
    table6 = "ICRP Publication 103, Table 6"
    lens = "ICRP Publication 118, statement on tissue reactions (2011)"
    fetus = "ICRP Publication 103, para 186 (embryo/fetus, remainder of pregnancy: 'about 1 mSv')"
    rules = (
        _limit(ADULT, EFFECTIVE, BLOCK, 100, f"{table6} (5 defined years)")
        + _limit(ADULT, EFFECTIVE, YEAR, 50, f"{table6} (any single year)")
        + _limit(ADULT, LENS, BLOCK, 100, f"{lens} (5 defined years)")
        + _limit(ADULT, LENS, YEAR, 50, f"{lens} (any single year)")
        + _limit(ADULT, SKIN, YEAR, 500, f"{table6} (skin, averaged over 1 cm2)")
        + _limit(ADULT, HANDS, YEAR, 500, f"{table6} (hands and feet)")
        + _limit(PREGNANT, FETUS, PREGNANCY, 1, fetus)
        + _limit(PUBLIC, EFFECTIVE, YEAR, 1, f"{table6} (public)")
        + _limit(PUBLIC, LENS, YEAR, 15, f"{table6} (public)")
        + _limit(PUBLIC, SKIN, YEAR, 50, f"{table6} (public)")
    )
    name = "ICRP 103 (2007) with the ICRP 2011 lens statement"
    return LimitSetSpec("icrp103", name, _with_levels(rules, 50))


def _euratom2013() -> LimitSetSpec:
    """Council Directive 2013/59/Euratom Art. 9 to 12."""
    d = "2013/59/Euratom"
    students = "apprentices/students 16-18"
    five_years = "any 5 consecutive years"
    # The 5-year rules are the ceilings of the Directive's alternatives (up to 50 in one year where
    # national law allows). With 20/year in force they never trip first; a lab under the
    # alternative edits the year rule to 50 and keeps them.
    rules = (
        _limit(ADULT, EFFECTIVE, YEAR, 20, f"{d} Art. 9(2)")
        + _limit(ADULT, EFFECTIVE, ROLLING_5, 100, f"{d} Art. 9(2) (average 20 over {five_years})")
        + _limit(ADULT, LENS, YEAR, 20, f"{d} Art. 9(3)(a)")
        + _limit(ADULT, LENS, ROLLING_5, 100, f"{d} Art. 9(3)(a) (100 in {five_years}, 50 in one)")
        + _limit(ADULT, SKIN, YEAR, 500, f"{d} Art. 9(3)(b) (averaged over 1 cm2)")
        + _limit(ADULT, HANDS, YEAR, 500, f"{d} Art. 9(3)(c) (extremities)")
        + _limit(PREGNANT, FETUS, PREGNANCY, 1, f"{d} Art. 10(1) (unborn child)")
        + _limit(TRAINEE, EFFECTIVE, YEAR, 6, f"{d} Art. 11(2) ({students})")
        + _limit(TRAINEE, LENS, YEAR, 15, f"{d} Art. 11(3)(a) ({students}, lens)")
        + _limit(TRAINEE, SKIN, YEAR, 150, f"{d} Art. 11(3)(b) ({students}, skin averaged over 1 cm2)")
        + _limit(TRAINEE, HANDS, YEAR, 150, f"{d} Art. 11(3)(c) ({students}, extremities)")
        + _limit(PUBLIC, EFFECTIVE, YEAR, 1, f"{d} Art. 12")
        + _limit(PUBLIC, LENS, YEAR, 15, f"{d} Art. 12")
        + _limit(PUBLIC, SKIN, YEAR, 50, f"{d} Art. 12")
    )
    return LimitSetSpec("euratom2013", "Council Directive 2013/59/Euratom", _with_levels(rules, 20))


def _cfr10_20() -> LimitSetSpec:
    """US 10 CFR 20.1201, 20.1207, 20.1208, 20.1301."""
    cfr = "10 CFR"
    minors = f"{cfr} 20.1207 (minors: 10 % of the adult limits)"
    shallow = f"{cfr} 20.1201(a)(2)(ii) (shallow-dose equivalent"
    # 20.1208(a) covers the entire pregnancy: the window starts at the estimated conception, and
    # 20.1208(d)'s 0.5 mSv after a declaration made near the limit applies (whole_pregnancy below).
    rules = (
        _limit(ADULT, EFFECTIVE, YEAR, 50, f"{cfr} 20.1201(a)(1)(i), (c) (deep-dose equivalent)")
        + _limit(ADULT, LENS, YEAR, 150, f"{cfr} 20.1201(a)(2)(i) (lens dose equivalent)")
        + _limit(ADULT, SKIN, YEAR, 500, f"{shallow}, skin)")
        + _limit(ADULT, HANDS, YEAR, 500, f"{shallow}, any extremity)")
        + _limit(TRAINEE, EFFECTIVE, YEAR, 5, minors)
        + _limit(TRAINEE, LENS, YEAR, 15, minors)
        + _limit(TRAINEE, SKIN, YEAR, 50, minors)
        + _limit(TRAINEE, HANDS, YEAR, 50, minors)
        + _limit(PREGNANT, FETUS, PREGNANCY, 5, f"{cfr} 20.1208(a) (embryo/fetus, whole pregnancy)")
        + _limit(PUBLIC, EFFECTIVE, YEAR, 1, f"{cfr} 20.1301(a)(1)")
    )
    return LimitSetSpec("cfr10_20", "US 10 CFR Part 20", _with_levels(rules, 50), whole_pregnancy=True)


def _irr17() -> LimitSetSpec:
    """UK Ionising Radiations Regulations 2017, Schedule 3."""
    sched = "IRR17 Schedule 3"
    memory = "from memory; not in REFERENCE.md"
    employees = f"{sched} (employees 18+, calendar year)"
    trainees = f"{sched} (trainees 16-18)"
    others = f"{sched} (other persons; {memory})"
    rules = (
        _limit(ADULT, EFFECTIVE, YEAR, 20, employees)
        + _limit(ADULT, LENS, YEAR, 20, employees)
        + _limit(ADULT, SKIN, YEAR, 500, f"{sched} (employees 18+, skin; {memory})")
        + _limit(ADULT, HANDS, YEAR, 500, f"{sched} (employees 18+, extremities; {memory})")
        + _limit(TRAINEE, EFFECTIVE, YEAR, 6, trainees)
        + _limit(TRAINEE, LENS, YEAR, 15, trainees)
        + _limit(TRAINEE, SKIN, YEAR, 150, trainees)
        + _limit(TRAINEE, HANDS, YEAR, 150, trainees)
        + _limit(PREGNANT, FETUS, PREGNANCY, 1, f"IRR17 reg. 9(6) (foetus; {memory})")
        + _limit(PUBLIC, EFFECTIVE, YEAR, 1, others)
        + _limit(PUBLIC, LENS, YEAR, 15, others)
        + _limit(PUBLIC, SKIN, YEAR, 50, others)
    )
    return LimitSetSpec("irr17", "UK IRR17 Schedule 3", _with_levels(rules, 20))


PRESETS: tuple[LimitSetSpec, ...] = (_icrp103(), _euratom2013(), _cfr10_20(), _irr17())


def preset(key: str) -> LimitSetSpec:
    """The shipped limit set with this key; KeyError names the known keys."""
    for limit_set in PRESETS:
        if limit_set.key == key:
            return limit_set
    raise KeyError(f"no preset {key!r}; known: {[s.key for s in PRESETS]}")
