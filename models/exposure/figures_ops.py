"""The lab's evaluation on its current date, stored per person and shared by every server process.

Kept in step with the dose inputs in the transaction that changes them: a flush that writes dose
records, pregnancy declarations or people (their category or whether they are active) queues those
people, and so does a bulk insert through `models.core.changes.mark_dose_inputs_changed`; before
the commit (or before the same transaction reads the figures) only they are evaluated again and
their rows rewritten. A write to a table in RECOMPUTE_EVERYONE re-evaluates everyone. The rows are
written in the changing transaction, so a rollback takes them back with it.

The first reader that finds figures for another date, a person without figures, or figures made
with other rules evaluates everyone once, under the write lock; `flask exposure refresh` and the
daily `flask reminders send` do it ahead of the first request of the day.
"""
from __future__ import annotations

import hashlib
from dataclasses import replace
from datetime import date
from itertools import chain

import numpy as np
import sqlalchemy as sa
from sqlalchemy import event
from sqlalchemy.orm import Session

from models.core.base import utcnow
from models.core.changes import DOSE_INPUTS_CHANGED
from models.core.codes import Location, PeriodKind, Quantity, Series
from models.core.database import hold_write_lock, holds_write_lock
from models.core.settings import lab_date
from models.doses.tables import DoseRecord
from models.exposure.engine import DoseTotals
from models.exposure.evaluation import graded
from models.exposure.lab_ops import LabEvaluation, evaluate_lab
from models.exposure.periods import Windows
from models.exposure.presets import LimitSetSpec
from models.exposure.rules_ops import rules_on
from models.exposure.tables import ExposureFigures, PregnancyDeclaration
from models.people.tables import Person

# Writing any of these tables can change everyone's figures: the rules' history, the limit sets, their rules.
RECOMPUTE_EVERYONE = frozenset({"lab_settings", "limit_set", "limit_rule", "rule_change"})
# The person's columns the evaluation depends on (active: who is listed).
_PERSON_INPUTS = ("category", "active")
_EVERYONE = "exposure_everyone"
# Changed people (a large import) are evaluated this many at a time: memory follows a group, not the lab.
_GROUP = 250
_SUPERSEDED = "exposure_superseded"

_S, _T = len(Series), len(PeriodKind)
# One person's figures as fixed-layout little-endian bytes: numbers only, so reading them back
# (np.frombuffer) can never run code. What the evaluation derives from these is derived again.
LAYOUT = np.dtype([
    ("start", "<M8[D]", (_T,)), ("end", "<M8[D]", (_T,)),
    ("dose", "<f8", (_S, _T)), ("missing", "<i4", (_S, _T)), ("quantity", "i1", (_S,)),
    ("location", "i1", (_S, _T)), ("stand_in", "?", (_S, _T)), ("rule", "<i2", (_S, _T)),
    ("level1", "<f8", (_S, _T)), ("level2", "<f8", (_S, _T)), ("limit", "<f8", (_S, _T)),
    ("allowance", "?"), ("reported", "?", (_S, _T)),
])


def lab_evaluation(session: Session, on: date, person_ids=None) -> LabEvaluation:
    """Everyone's evaluation on `on`: the stored figures on the lab's current date, else computed
    from the records (of `person_ids` only, when given: a page about one person)."""
    if on != lab_date(session, utcnow()):
        return evaluate_lab(session, on, person_ids)
    bring_up_to_date(session)
    return _stored(session, on) or refresh_figures(session, on, if_stale=True)


def refresh_figures(session: Session, on: date, *, if_stale: bool = False) -> LabEvaluation:
    """Evaluate everyone on `on` and store it under the write lock.

    A session that is writing does it in its own transaction; any other in a short one of its own,
    so a page that only reads needs no commit. if_stale: unless the figures, checked again once the
    lock is held, are current (two processes at the date rollover evaluate once).
    """
    if holds_write_lock(session):
        return _store(session, evaluate_lab(session, on), everyone=True)
    with Session(bind=session.get_bind()) as own:
        hold_write_lock(own)
        lab = (if_stale and _stored(own, on)) or _store(own, evaluate_lab(own, on), everyone=True)
        own.commit()
    return lab


def bring_up_to_date(session: Session) -> None:
    """Rewrite the figures of the people whose inputs this transaction changed (everyone's after a
    change of rules), evaluated on the lab's current date."""
    session.flush()
    # Evaluating may itself flush (the settings row on first use); a second round takes that in.
    for _ in range(2):
        everyone = session.info.pop(_EVERYONE, False)
        people = session.info.pop(DOSE_INPUTS_CHANGED, set())
        superseded = session.info.pop(_SUPERSEDED, set())
        if not (everyone or people or superseded):
            return
        today = lab_date(session, utcnow())
        # A version recorded against another person changes the figures of both.
        people |= set(session.scalars(sa.select(DoseRecord.person_id).where(DoseRecord.id.in_(superseded))))
        if everyone:
            _store(session, evaluate_lab(session, today), everyone=True)
            continue
        chosen = sorted(people)
        for start in range(0, len(chosen), _GROUP):
            _store(session, evaluate_lab(session, today, chosen[start:start + _GROUP]), everyone=False)


def rules_marker(limit_set: LimitSetSpec, policies) -> str:
    """A digest of what, besides a person's own inputs, their figures were evaluated with."""
    return hashlib.sha256(repr((str(LAYOUT), limit_set, policies)).encode()).hexdigest()


def _store(session: Session, lab: LabEvaluation, everyone: bool) -> LabEvaluation:
    """Replace the stored figures of the people in `lab` (of everyone: every row) by `lab`'s."""
    marker = rules_marker(*rules_on(session, lab.on))
    table = ExposureFigures.__table__
    connection = session.connection()
    stale = table.delete()
    connection.execute(stale if everyone else stale.where(table.c.person_id.in_(lab.person_ids.tolist())))
    raw, size = _pack(lab).tobytes(), LAYOUT.itemsize
    if len(lab.person_ids):
        connection.execute(table.insert(), [
            {"person_id": person_id, "evaluated_on": lab.on, "rules": marker,
             "figures": raw[i * size:(i + 1) * size]}
            for i, person_id in enumerate(lab.person_ids.tolist())])
    return lab


def _pack(lab: LabEvaluation) -> np.ndarray:
    """(P,) records of LAYOUT holding the evaluation's own arrays."""
    evaluation, totals = lab.evaluation, lab.evaluation.totals
    packed = np.zeros(len(lab.person_ids), dtype=LAYOUT)
    for name, values in (("start", totals.windows.start), ("end", totals.windows.end),
                         ("dose", totals.dose), ("missing", totals.missing),
                         ("quantity", totals.quantity), ("location", totals.location),
                         ("stand_in", totals.stand_in), ("reported", totals.reported),
                         ("rule", evaluation.rule),
                         ("level1", evaluation.level1), ("level2", evaluation.level2),
                         ("limit", evaluation.limit)):
        packed[name] = values
    packed["allowance"] = evaluation.allowance
    return packed


def _stored(session: Session, on: date) -> LabEvaluation | None:
    """Everyone's stored figures as an evaluation; None unless every person has figures for `on`
    made with the rules in force."""
    limit_set, policies = rules_on(session, on)
    marker = rules_marker(limit_set, policies)
    table = ExposureFigures.__table__
    rows = session.execute(
        sa.select(Person.id, table.c.evaluated_on, table.c.rules, table.c.figures)
        .select_from(Person).outerjoin(table, table.c.person_id == Person.id).order_by(Person.id)).all()
    if any(on_date != on or rules != marker or figures is None or len(figures) != LAYOUT.itemsize
           for _, on_date, rules, figures in rows):
        return None
    packed = np.frombuffer(b"".join(r[3] for r in rows), dtype=LAYOUT)
    if not _in_range(packed, len(limit_set.rules)):
        return None
    person_ids = np.fromiter((r[0] for r in rows), dtype=np.int64, count=len(rows))
    return LabEvaluation(on, person_ids, _unpack(packed, on, limit_set, policies))


def _in_range(packed: np.ndarray, n_rules: int) -> bool:
    """Every code names something that exists (figures edited by hand are evaluated afresh)."""
    return bool(np.all((packed["rule"] >= -1) & (packed["rule"] < n_rules))
                and np.all((packed["quantity"] >= 0) & (packed["quantity"] < len(Quantity)))
                and np.all((packed["location"] >= 0) & (packed["location"] < len(Location))))


def _unpack(packed: np.ndarray, on: date, limit_set: LimitSetSpec, policies):
    """The evaluation held in LAYOUT records, in the engine's own types."""
    windows = Windows(on, packed["start"].copy(), packed["end"].copy())
    totals = DoseTotals(on, policies, windows, packed["dose"].copy(), packed["missing"].astype(np.int64),
                        packed["quantity"].copy(), packed["location"].copy(), packed["stand_in"].copy(),
                        packed["reported"].copy())
    evaluation = graded(totals, limit_set, packed["rule"].astype(np.int64), packed["level1"].copy(),
                        packed["level2"].copy(), packed["limit"].copy())
    return replace(evaluation, allowance=packed["allowance"].copy())


@event.listens_for(Session, "after_flush")
def _note_changed_inputs(session: Session, _flush_context) -> None:
    """Queue the people whose figures this flush changes, or everyone after a change of rules."""
    people = session.info.setdefault(DOSE_INPUTS_CHANGED, set())
    new = session.new  # each access builds the set anew
    changed = [obj for obj in session.dirty if session.is_modified(obj, include_collections=False)]
    for obj in chain(new, changed, session.deleted):
        if getattr(obj, "__tablename__", None) in RECOMPUTE_EVERYONE:
            session.info[_EVERYONE] = True
        elif isinstance(obj, DoseRecord):
            people.add(obj.person_id)
            if obj.supersedes_id is not None:
                session.info.setdefault(_SUPERSEDED, set()).add(obj.supersedes_id)
        elif isinstance(obj, PregnancyDeclaration):
            people.add(obj.person_id)
        elif isinstance(obj, Person) and (obj in new or _person_inputs_changed(obj)):
            people.add(obj.id)


def _person_inputs_changed(person: Person) -> bool:
    """Whether a flushed person's category or active flag changed."""
    state = sa.inspect(person)
    return any(state.attrs[name].history.has_changes() for name in _PERSON_INPUTS)


@event.listens_for(Session, "before_commit")
def _store_before_commit(session: Session) -> None:
    """The changed people's figures go in with the change."""
    bring_up_to_date(session)


@event.listens_for(Session, "after_transaction_end")
def _forget_queued(session: Session, transaction) -> None:
    """A transaction that ended without storing (rolled back) leaves nothing queued for the next."""
    if transaction.parent is None:
        for key in (DOSE_INPUTS_CHANGED, _EVERYONE, _SUPERSEDED):
            session.info.pop(key, None)
