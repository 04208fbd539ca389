"""The safety officer's limit sets: presets installed, copies and their rules (the set in force: rules_ops).

Presets (sets with a preset_key) are read-only: they are the published values with their clauses.
A lab changes a copy. Every check names the field it concerns, so forms show it beside the field.
"""
from __future__ import annotations

import math

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.base import taken
from models.core.codes import LevelKind, PeriodKind, Series, WorkerCategory
from models.core.errors import Invalid
from models.exposure import presets
from models.exposure.tables import LimitRule, LimitSet

RULE_COLUMNS = ("category", "series", "period", "limit_msv", "level1_kind", "level1_value",
                "level2_kind", "level2_value", "clause")
FIRST_BLOCK_YEARS = (1950, 2200)
_LEVEL_NAMES = {1: "I", 2: "II"}


def is_editable(limit_set: LimitSet) -> bool:
    """A set the lab made (a copy) may change; a shipped preset may not."""
    return limit_set.preset_key is None


def _require_editable(limit_set: LimitSet) -> None:
    """Refuse a change to a preset."""
    if not is_editable(limit_set):
        raise Invalid.one("rules", f"'{limit_set.name}' is a shipped preset and cannot be changed; "
                                   "copy it and change the copy.")


def member(cls, value, field: str, errors: dict) -> object:
    """The enum member for a value, or an error for the field."""
    try:
        return cls(value)
    except ValueError:
        errors[field] = f"Choose one of the listed values, not '{value}'."
        return None


def _level(n: int, values: dict, limit_msv: float | None, errors: dict):
    """Investigation level n from the values, or None; problems go into `errors`."""
    name = _LEVEL_NAMES[n]
    kind, value = values.get(f"level{n}_kind") or None, values.get(f"level{n}_value")
    if kind is None:
        if value is not None:
            errors[f"level{n}_kind"] = (f"Say whether level {name} is a fraction of the limit "
                                        "or mSv per period.")
        return None
    kind = member(LevelKind, kind, f"level{n}_kind", errors)
    field = f"level{n}_value"
    if kind is None:
        return None
    if value is None:
        errors[field] = f"Enter level {name}."
    elif not value > 0:
        errors[field] = f"Level {name} must be greater than zero."
    elif kind is LevelKind.FRACTION and value > 1:
        errors[field] = f"Level {name} as a fraction of the limit is at most 1, not {value:g}."
    elif kind is LevelKind.FRACTION and limit_msv is None:
        errors[field] = f"Level {name} as a fraction needs a limit; give a limit or mSv instead."
    else:
        return presets.InvestigationLevel(kind, value)
    return None


def _validate_order(level1, level2, limit_msv: float | None, errors: dict) -> None:
    """Level I <= level II <= limit, in mSv, with the message beside the offending level."""
    level1, level2 = (math.nan if x is None else x.msv(limit_msv) for x in (level1, level2))
    limit = math.nan if limit_msv is None else limit_msv
    if not math.isnan(level1) and not math.isnan(level2) and level1 > level2:
        errors["level2_value"] = (f"Level II ({level2:g} mSv) must not be below level I "
                                  f"({level1:g} mSv).")
    for n, threshold in ((1, level1), (2, level2)):
        if not math.isnan(threshold) and not math.isnan(limit) and threshold > limit:
            errors[f"level{n}_value"] = (f"Level {_LEVEL_NAMES[n]} ({threshold:g} mSv) must not be "
                                         f"above the limit ({limit:g} mSv).")


def validate_rule(values: dict) -> presets.LimitRuleSpec:
    """A rule from form values (keys RULE_COLUMNS; numbers as float or None), or Invalid."""
    errors: dict[str, str] = {}
    category = member(WorkerCategory, values.get("category"), "category", errors)
    series = member(Series, values.get("series"), "series", errors)
    period = member(PeriodKind, values.get("period"), "period", errors)
    if series is Series.FETUS and category not in (None, WorkerCategory.DECLARED_PREGNANT):
        errors["series"] = "The embryo/fetus series applies to the declared pregnant worker only."
    if period is PeriodKind.PREGNANCY and series not in (None, Series.FETUS):
        errors["period"] = "The pregnancy period applies to the embryo/fetus series only."
    limit_msv = values.get("limit_msv")
    if limit_msv is not None and not limit_msv > 0:
        errors["limit_msv"] = "The limit must be greater than zero."
        limit_msv = None
    level1 = _level(1, values, limit_msv, errors)
    level2 = _level(2, values, limit_msv, errors)
    if limit_msv is None and not values.get("level1_kind") and not values.get("level2_kind"):
        errors.setdefault("limit_msv", "Give a limit, an investigation level, or both.")
    clause = (values.get("clause") or "").strip()
    if not clause:
        errors["clause"] = "Name the source of this rule: a clause, or 'local rule'."
    if not errors:
        _validate_order(level1, level2, limit_msv, errors)
    if errors:
        raise Invalid(errors)
    return presets.LimitRuleSpec(category, series, period, limit_msv, level1, level2, clause)


def save_rule(session: Session, limit_set: LimitSet, values: dict,
              rule: LimitRule | None = None) -> LimitRule:
    """Add a rule to a copied set, or change one of its rules."""
    _require_editable(limit_set)
    checked = validate_rule(values)
    row = (checked.category, checked.series, checked.period)
    if any(r is not rule and (r.category, r.series, r.period) == row for r in limit_set.rules):
        raise Invalid.one("period", "This set already has a rule for that category, series and "
                                    "period; change that rule instead.")
    stored = stored_rule(checked)
    if rule is None:
        rule = stored
        limit_set.rules.append(rule)
    else:
        for column in RULE_COLUMNS:
            setattr(rule, column, getattr(stored, column))
    session.flush()
    return rule


def remove_rule(session: Session, limit_set: LimitSet, rule: LimitRule) -> None:
    """Take a rule out of a copied set."""
    _require_editable(limit_set)
    limit_set.rules.remove(rule)
    session.flush()


DEFAULT_PRESET = "icrp103"


def _level_columns(level: presets.InvestigationLevel | None) -> tuple:
    """(kind, value) columns of an investigation level."""
    return (None, None) if level is None else (level.kind, level.value)


def _stored_level(kind, value) -> presets.InvestigationLevel | None:
    """An investigation level from its (kind, value) columns."""
    return None if kind is None else presets.InvestigationLevel(kind, value)


def stored_rule(rule: presets.LimitRuleSpec) -> LimitRule:
    """A table row for one rule."""
    level1_kind, level1_value = _level_columns(rule.level1)
    level2_kind, level2_value = _level_columns(rule.level2)
    return LimitRule(category=rule.category, series=rule.series, period=rule.period,
                     limit_msv=rule.limit_msv, level1_kind=level1_kind, level1_value=level1_value,
                     level2_kind=level2_kind, level2_value=level2_value, clause=rule.clause)


def install_preset(session: Session, key: str) -> LimitSet:
    """Store a shipped preset as a limit set (once: a set already installed is returned)."""
    existing = session.scalar(sa.select(LimitSet).where(LimitSet.preset_key == key))
    if existing is not None:
        return existing
    try:
        preset = presets.preset(key)
    except KeyError as error:
        raise Invalid.one("preset", f"There is no preset called '{key}'.") from error
    stored = LimitSet(name=preset.name, preset_key=preset.key, whole_pregnancy=preset.whole_pregnancy,
                      rules=[stored_rule(rule) for rule in preset.rules])
    session.add(stored)
    session.flush()
    return stored


def copy_limit_set(session: Session, source: LimitSet, name: str) -> LimitSet:
    """An editable copy of a limit set under a new name."""
    name = name.strip()
    if not name:
        raise Invalid.one("name", "Name the copy.")
    if taken(session, LimitSet.name, name):
        raise Invalid.one("name", f"A limit set called '{name}' already exists.")
    copy = LimitSet(name=name, description=f"Copy of {source.name}", whole_pregnancy=source.whole_pregnancy,
                    rules=[stored_rule(rule) for rule in as_rules(source).rules])
    session.add(copy)
    session.flush()
    return copy


def as_rules(stored: LimitSet) -> presets.LimitSetSpec:
    """A stored set as the evaluation takes it; a rule that breaks the ordering is refused."""
    try:
        rules = tuple(
            presets.LimitRuleSpec(r.category, r.series, r.period, r.limit_msv,
                                    _stored_level(r.level1_kind, r.level1_value),
                                    _stored_level(r.level2_kind, r.level2_value), r.clause or "(no clause)")
            for r in stored.rules
        )
        return presets.LimitSetSpec(stored.preset_key or f"set-{stored.id}", stored.name, rules,
                                    bool(stored.whole_pregnancy))
    except ValueError as error:
        raise Invalid.one("rules", str(error)) from error
