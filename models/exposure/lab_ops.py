"""The lab's dose evaluation: stored records read into the engine's arrays, evaluated on a date."""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date, timedelta

import numpy as np
import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.codes import PeriodKind, Series, code
from models.doses.tables import DoseRecord
from models.doses.version_ops import is_current
from models.exposure import presets
from models.exposure.cache import UntilChanged
from models.exposure.engine import DoseRecords, DoseTotals, Policies, compute_doses, person_index
from models.exposure.evaluation import Evaluation, evaluate, with_declaration_allowance
from models.exposure.rules_ops import rules_on
from models.exposure.tables import PregnancyDeclaration
from models.people.tables import Person

# Read as the driver gives them, these skip a Python conversion per row (enum lookup, date parse).
_AS_STORED = ("quantity", "location", "wear_start", "wear_end", "result")


def _record_columns(as_stored: bool = False) -> sa.Select:
    """The columns the engine needs, of the records in force, in one query.

    as_stored: the enum and date columns come back as stored (text; dates on PostgreSQL).
    """
    columns = (DoseRecord.person_id, DoseRecord.quantity, DoseRecord.location,
               DoseRecord.wear_start, DoseRecord.wear_end, DoseRecord.value_msv,
               DoseRecord.result, DoseRecord.mrd_msv)
    return sa.select(*(
        sa.type_coerce(c, sa.String) if as_stored and c.key in _AS_STORED else c for c in columns
    )).where(is_current())


def read_records(session: Session, people: np.ndarray) -> DoseRecords:
    """Every record in force as engine columns, people given as positions in `people`."""
    session.flush()  # Core execution below does not autoflush
    # Core rows: the ORM's per-row loading costs more than the query itself at 100,000s of rows.
    rows = session.connection().execute(_record_columns(as_stored=True)).all()
    columns = list(zip(*rows)) if rows else [()] * 8
    person_ids, quantity, location, start, end, value, result, mrd = columns
    return DoseRecords(
        person=person_index(np.asarray(person_ids, dtype=np.int64), people),
        quantity=np.asarray(quantity, dtype=str),
        location=np.asarray(location, dtype=str),
        wear_start=np.asarray(start, dtype="datetime64[D]"),
        wear_end=np.asarray(end, dtype="datetime64[D]"),
        value=np.asarray(value, dtype=float),  # None becomes NaN
        result=np.asarray(result, dtype=str),
        mrd=np.asarray(mrd, dtype=float),
    )


# From memory (obstetric common practice): a pregnancy lasts about 38 weeks from conception.
PREGNANCY_DAYS = 266


def _declarations_in_force(session: Session, people: np.ndarray, on: date) -> list[tuple]:
    """(row in `people`, declared, ended, conception, expected end) of each declaration in force on
    `on`, the earliest first; people not in `people` are skipped (a page may ask for one person)."""
    position = {int(person_id): i for i, person_id in enumerate(np.asarray(people).tolist())}
    rows = session.execute(
        sa.select(PregnancyDeclaration.person_id, PregnancyDeclaration.declared_on,
                  PregnancyDeclaration.ended_on, PregnancyDeclaration.conception_on,
                  PregnancyDeclaration.expected_end_on)
        .where(PregnancyDeclaration.declared_on <= on,
               sa.or_(PregnancyDeclaration.ended_on.is_(None), PregnancyDeclaration.ended_on >= on))
        .order_by(PregnancyDeclaration.declared_on)
    ).all()
    return [(position[row[0]], *row[1:]) for row in rows if row[0] in position]


def pregnancy_windows(session: Session, people: np.ndarray, on: date,
                      whole_pregnancy: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """(P,) start and end of each person's declared pregnancy in force on `on` (NaT for none).

    The window starts at the declaration, or with `whole_pregnancy` at the estimated conception
    (else the expected end less PREGNANCY_DAYS, else the declaration less PREGNANCY_DAYS: the
    earliest it can have been, so nothing is left out). It ends when the pregnancy ended, else on
    the expected end (or `on`, if later) so the projection runs to it, else on `on`.
    """
    start = np.full(len(people), np.datetime64("NaT"), dtype="datetime64[D]")
    end = start.copy()
    # Later declarations win.
    for at, declared_on, ended_on, conception_on, expected_end_on in _declarations_in_force(session, people, on):
        start[at] = declared_on
        if whole_pregnancy:
            start[at] = conception_on or (expected_end_on or declared_on) - timedelta(days=PREGNANCY_DAYS)
        if ended_on is not None:
            end[at] = ended_on
        elif expected_end_on is not None:
            end[at] = max(expected_end_on, on)
        else:
            end[at] = np.datetime64("NaT")
    return start, end


def declaration_dates(session: Session, people: np.ndarray, on: date) -> np.ndarray:
    """(P,) date of each person's declaration in force on `on` (NaT for none)."""
    declared = np.full(len(people), np.datetime64("NaT"), dtype="datetime64[D]")
    for at, declared_on, *_ in _declarations_in_force(session, people, on):
        declared[at] = declared_on
    return declared


def fetal_dose_before(records: DoseRecords, n_people: int, on: date, policies: Policies,
                      start: np.ndarray, declared: np.ndarray) -> np.ndarray:
    """(P,) fetal dose from the window's start to the day before the declaration (0 for none)."""
    before_end = declared - np.timedelta64(1, "D")
    counted = ~np.isnat(start) & ~np.isnat(declared) & (before_end >= start)
    nat = np.datetime64("NaT")
    totals = compute_doses(records, n_people, on, policies, np.where(counted, start, nat),
                           np.where(counted, before_end, nat))
    return np.nan_to_num(totals.dose[:, code(Series.FETUS), code(PeriodKind.PREGNANCY)], nan=0.0)


@dataclass(frozen=True)
class LabEvaluation:
    """Everyone's evaluation on one date, with the person ids in row order."""

    on: date
    person_ids: np.ndarray
    evaluation: Evaluation

    @property
    def totals(self) -> DoseTotals:
        """The engine's sums behind the evaluation."""
        return self.evaluation.totals

    def row_of(self, person_id: int) -> int:
        """The row of a person in the arrays."""
        return int(person_index(np.array([person_id]), self.person_ids)[0])


def evaluate_lab(session: Session, on: date) -> LabEvaluation:
    """Read the records in force and evaluate everyone on `on` with the policies and limits of that date."""
    everyone = session.execute(sa.select(Person.id, Person.category).order_by(Person.id)).all()
    people, categories = zip(*everyone) if everyone else ((), ())
    person_ids = np.asarray(people, dtype=np.int64)
    records = read_records(session, person_ids)
    limit_set, policies = rules_on(session, on)
    start, end = pregnancy_windows(session, person_ids, on, limit_set.whole_pregnancy)
    totals = compute_doses(records, len(person_ids), on, policies, start, end)
    evaluation = evaluate(totals, limit_set,
                          np.asarray([str(c) for c in categories], dtype=str))
    if limit_set.whole_pregnancy and totals.windows.exists[:, code(PeriodKind.PREGNANCY)].any():
        declared = declaration_dates(session, person_ids, on)
        before = fetal_dose_before(records, len(person_ids), on, policies, start, declared)
        evaluation = with_declaration_allowance(evaluation, before, presets.DECLARATION_ALLOWANCE_MSV,
                                                presets.DECLARATION_ALLOWANCE_CLAUSE)
    return LabEvaluation(on, person_ids, evaluation)


# Everything the evaluation reads: the records, declarations, people's categories, the rules' history, limits.
EVALUATION_INPUTS = frozenset({"dose_record", "pregnancy_declaration", "person", "rule_change",
                               "limit_set", "limit_rule"})
_evaluations: UntilChanged[LabEvaluation] = UntilChanged(EVALUATION_INPUTS)


def cached_lab_evaluation(session: Session, on: date) -> LabEvaluation:
    """The lab's evaluation, recomputed only when one of its inputs was written or the date changed."""
    return _evaluations.get(session, on, lambda: evaluate_lab(session, on))
