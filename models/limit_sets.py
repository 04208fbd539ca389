"""Stored limit sets: installing a preset, copying a set, and reading one back as rules."""
from __future__ import annotations

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models import limit_presets
from models.base import taken
from models.errors import Invalid
from models.limits import LimitRule, LimitSet


def _level_columns(level: limit_presets.InvestigationLevel | None) -> tuple:
    """(kind, value) columns of an investigation level."""
    return (None, None) if level is None else (level.kind, level.value)


def _level(kind, value) -> limit_presets.InvestigationLevel | None:
    """An investigation level from its (kind, value) columns."""
    return None if kind is None else limit_presets.InvestigationLevel(kind, value)


def stored_rule(rule: limit_presets.LimitRule) -> LimitRule:
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
        preset = limit_presets.preset(key)
    except KeyError as error:
        raise Invalid.one("preset", f"There is no preset called '{key}'.") from error
    stored = LimitSet(name=preset.name, preset_key=preset.key,
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
    copy = LimitSet(name=name, description=f"Copy of {source.name}",
                    rules=[stored_rule(rule) for rule in as_rules(source).rules])
    session.add(copy)
    session.flush()
    return copy


def as_rules(stored: LimitSet) -> limit_presets.LimitSet:
    """A stored set as the evaluation takes it; a rule that breaks the ordering is refused."""
    try:
        rules = tuple(
            limit_presets.LimitRule(r.category, r.series, r.period, r.limit_msv,
                                    _level(r.level1_kind, r.level1_value),
                                    _level(r.level2_kind, r.level2_value), r.clause or "(no clause)")
            for r in stored.rules
        )
        return limit_presets.LimitSet(stored.preset_key or f"set-{stored.id}", stored.name, rules)
    except ValueError as error:
        raise Invalid.one("rules", str(error)) from error
