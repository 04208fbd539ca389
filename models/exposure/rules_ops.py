"""The rules as they stood: from which lab date each limit set and each set of counting policies applied.

Every change of the set in force or of the policies is a `RuleChange` row applying from a lab date
(inclusive) until the next change of the same kind; on one date the later recorded change wins. A row
that changes the policies leaves the set as it stood, and the other way round, so a change into the
past never undoes a later change of the other kind. The history is the rules' one source: `rules_on`
answers for any date, and `lab_settings` keeps a copy of today's rules that only `record_rule_change`
writes. A change applies from today or an earlier date, never a later one, so today's rules change
only with a new row and that copy cannot drift.
"""
from __future__ import annotations

from datetime import date

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.audit import audit_ops
from models.core.bounds import DATE_MESSAGE, EARLIEST, date_in_range
from models.core.codes import LensSource, MrdPolicy, Proration
from models.core.errors import Invalid
from models.core.settings import FIVE_YEAR_FIRST_YEAR_DEFAULT, LabSettings
from models.exposure import presets
from models.exposure.engine import Policies
from models.exposure.limit_set_ops import DEFAULT_PRESET, FIRST_BLOCK_YEARS, as_rules, install_preset, member
from models.exposure.tables import LimitSet, RuleChange

NO_LIMIT_SET = presets.LimitSetSpec("none", "No limit set chosen", ())
# The rules of a database that has never recorded a change: the settings' own defaults, no set.
NO_CHANGE_POLICIES = Policies(first_block_year=FIVE_YEAR_FIRST_YEAR_DEFAULT)


def _latest(session: Session, on: date, kind: sa.ColumnElement[bool]) -> RuleChange | None:
    """The change of a kind in force on `on`: the latest from-date on or before it, the later recorded on a tie."""
    return session.scalar(sa.select(RuleChange).where(kind, RuleChange.from_on <= on)
                          .order_by(RuleChange.from_on.desc(), RuleChange.id.desc()).limit(1))


def changes_in_force(session: Session, on: date) -> tuple[RuleChange | None, RuleChange | None]:
    """(the change that put the limit set in force on `on`, the one that put the policies in force)."""
    return (_latest(session, on, RuleChange.sets_limit_set),
            _latest(session, on, RuleChange.proration.is_not(None)))


def policies_of(change: RuleChange | None) -> Policies:
    """The counting policies a change put in force."""
    if change is None:
        return NO_CHANGE_POLICIES
    return Policies(change.proration, change.mrd_policy, change.lens_source, change.five_year_first_year)


def limit_set_of(change: RuleChange | None) -> presets.LimitSetSpec:
    """The limit set a change put in force, as rules."""
    if change is None or change.limit_set is None:
        return NO_LIMIT_SET
    return as_rules(change.limit_set)


def rules_on(session: Session, on: date) -> tuple[presets.LimitSetSpec, Policies]:
    """The limit set and counting policies in force on the lab date `on`."""
    set_change, policy_change = changes_in_force(session, on)
    return limit_set_of(set_change), policies_of(policy_change)


def rule_history(session: Session) -> list[RuleChange]:
    """Every change, the latest from-date first (the later recorded first on a tie)."""
    return list(session.scalars(sa.select(RuleChange)
                                .order_by(RuleChange.from_on.desc(), RuleChange.id.desc())))


def validate_change(from_on: date | None, reason: str | None, today: date) -> None:
    """A change applies from a date in range, not after today, and says why."""
    errors = {}
    if from_on is None or not date_in_range(from_on):
        errors["from_on"] = DATE_MESSAGE
    elif from_on > today:
        errors["from_on"] = (f"A change applies from today ({today.isoformat()}) or an earlier date; "
                             "record a later change on its day.")
    if not (reason or "").strip():
        errors["reason"] = "Give a reason for the audit trail."
    if errors:
        raise Invalid(errors)


_KEEP = object()


def record_rule_change(session: Session, settings: LabSettings, *, from_on: date, reason: str, today: date,
                       by: int | None, limit_set: LimitSet | None | object = _KEEP,
                       policies: Policies | None = None) -> RuleChange:
    """Put a limit set and/or policies in force from `from_on`; what is not given stays as it stands."""
    validate_change(from_on, reason, today)
    change = RuleChange(from_on=from_on, sets_limit_set=limit_set is not _KEEP,
                        limit_set=None if limit_set is _KEEP else limit_set,
                        changed_by_id=by, reason=reason.strip())
    if policies is not None:
        change.proration, change.mrd_policy = policies.proration, policies.mrd
        change.lens_source, change.five_year_first_year = policies.lens_source, policies.first_block_year
    with audit_ops.reason(session, reason.strip()):
        session.add(change)
        session.flush()
        _copy_todays_rules(session, settings, today)
        session.flush()
    return change


def _copy_todays_rules(session: Session, settings: LabSettings, today: date) -> None:
    """Keep the settings' copy of today's rules equal to the history's."""
    set_change, policy_change = changes_in_force(session, today)
    policies = policies_of(policy_change)
    settings.limit_set = None if set_change is None else set_change.limit_set
    settings.proration, settings.mrd_policy = policies.proration, policies.mrd
    settings.lens_source, settings.five_year_first_year = policies.lens_source, policies.first_block_year


def choose_limit_set(session: Session, settings: LabSettings, limit_set: LimitSet | None, *,
                     from_on: date, reason: str, today: date, by: int | None) -> RuleChange:
    """Put a stored set in force for the whole lab from `from_on`."""
    if limit_set is None:
        raise Invalid.one("limit_set_id", "Choose one of the installed limit sets.")
    as_rules(limit_set)  # refuses a set whose rules would not evaluate
    change = record_rule_change(session, settings, from_on=from_on, reason=reason, today=today, by=by,
                                limit_set=limit_set)
    settings.limit_set_by_default = False
    session.flush()
    return change


def validate_policies(values: dict) -> Policies:
    """Proration, MRD policy, lens source and the first year of the five-year blocks, or Invalid."""
    errors: dict[str, str] = {}
    proration = member(Proration, values.get("proration"), "proration", errors)
    mrd = member(MrdPolicy, values.get("mrd_policy"), "mrd_policy", errors)
    lens = member(LensSource, values.get("lens_source"), "lens_source", errors)
    first_year = values.get("five_year_first_year")
    low, high = FIRST_BLOCK_YEARS
    if first_year is None or not low <= first_year <= high:
        errors["five_year_first_year"] = f"Enter a year between {low} and {high}."
    if errors:
        raise Invalid(errors)
    return Policies(proration, mrd, lens, first_year)


def set_policies(session: Session, settings: LabSettings, values: dict, *, from_on: date, reason: str,
                 today: date, by: int | None) -> RuleChange:
    """Put counting policies in force from `from_on`; the limit set stays as it stood then."""
    return record_rule_change(session, settings, from_on=from_on, reason=reason, today=today, by=by,
                              policies=validate_policies(values))


def install_default(session: Session, settings: LabSettings, key: str | None, today: date) -> LimitSet | None:
    """On a database that has never had a limit set, put the preset `key` (or DEFAULT_PRESET) in force
    for every date, marked as installed by default until the safety officer confirms or changes it;
    else change nothing."""
    if session.scalar(sa.select(RuleChange.id).where(RuleChange.limit_set_id.is_not(None)).limit(1)):
        return None
    stored = install_preset(session, key or DEFAULT_PRESET)
    record_rule_change(session, settings, from_on=EARLIEST, today=today, by=None, limit_set=stored,
                       reason=f"Installed by default when the database was created ({stored.name}).")
    settings.limit_set_by_default = True
    session.flush()
    return stored
