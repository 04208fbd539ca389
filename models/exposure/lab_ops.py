"""The lab's dose evaluation: stored records read into the engine's arrays, evaluated on a date."""
from __future__ import annotations

from dataclasses import dataclass
from datetime import date, timedelta
from enum import StrEnum

import numpy as np
import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.codes import Location, PeriodKind, Quantity, Result, Series, code
from models.doses.tables import DoseRecord
from models.doses.version_ops import is_current
from models.exposure import presets
from models.exposure.engine import DoseRecords, DoseTotals, Policies, compute_doses, person_index
from models.exposure.evaluation import Evaluation, evaluate, with_declaration_allowance
from models.exposure.rules_ops import rules_on
from models.exposure.tables import PregnancyDeclaration
from models.people.tables import Person


def _record_columns() -> sa.Select:
    """The columns the engine needs, of the records in force, through the ORM's types (the bench
    times other ways of summing them)."""
    return sa.select(DoseRecord.person_id, DoseRecord.quantity, DoseRecord.location,
                     DoseRecord.wear_start, DoseRecord.wear_end, DoseRecord.value_msv,
                     DoseRecord.result, DoseRecord.mrd_msv).where(is_current())


# One row of the lean read: what the engine needs as numbers.
_LEAN_ROW = np.dtype([("id", "i8"), ("person", "i8"), ("quantity", "i1"), ("location", "i1"),
                      ("start", "i8"), ("end", "i8"), ("value", "f8"), ("result", "i1"), ("mrd", "f8")])
_REPLACED_ROW = np.dtype([("id", "i8")])
# Days since 1970-01-01, counted by the database so that dates arrive as integers.
_DAY_NUMBER = {"sqlite": "CAST(julianday({}) - 2440587.5 AS INTEGER)",
               "postgresql": "({} - DATE '1970-01-01')"}


def _as_code(column: str, cls: type[StrEnum]) -> str:
    """SQL giving a stored enum value's integer code, -1 for a value the code does not know."""
    whens = " ".join(f"WHEN '{member.value}' THEN {i}" for i, member in enumerate(cls))
    return f"CASE {column} {whens} ELSE -1 END"


def _lean_sql(dialect: str, person_ids: np.ndarray | None) -> str:
    """Every dose record (of `person_ids` only, when given) as numbers, with no subquery."""
    day = _DAY_NUMBER[dialect]
    listed = ",".join(str(int(i)) for i in person_ids) if person_ids is not None else ""
    chosen = "" if person_ids is None else f" WHERE person_id IN ({listed or 'NULL'})"
    return (f"SELECT id, person_id, {_as_code('quantity', Quantity)}, {_as_code('location', Location)}, "
            f"{day.format('wear_start')}, {day.format('wear_end')}, value_msv, "
            f"{_as_code('result', Result)}, mrd_msv FROM dose_record{chosen}")


# Rows held as Python tuples at a time: the peak memory of a full read is one chunk's, not the lab's.
_CHUNK = 50_000


def _fetch(session: Session, sql: str, row: np.dtype) -> np.ndarray:
    """The rows of one statement as a structured array, through a plain DB-API cursor (no per-row
    processing); NULL numbers become NaN."""
    cursor = session.connection().connection.cursor()
    try:
        cursor.execute(sql)
        parts = [np.array(rows, dtype=row) for rows in iter(lambda: cursor.fetchmany(_CHUNK), [])]
    finally:
        cursor.close()
    return np.concatenate(parts) if parts else np.empty(0, dtype=row)


def read_records(session: Session, people: np.ndarray, person_ids: np.ndarray | None = None) -> DoseRecords:
    """The records in force as engine columns, people given as positions in `people`; only those
    of `person_ids` when given.

    Read through a plain cursor as integers straight into arrays. A correction points to the version
    it replaces (supersedes_id, unique and indexed), so the records in force are those no row points
    to: the replaced ids come from that index, not from a NOT EXISTS per row.
    """
    session.flush()  # the cursor below does not autoflush
    dialect = session.connection().dialect.name
    rows = _fetch(session, _lean_sql(dialect, person_ids), _LEAN_ROW)
    replaced = _fetch(session, "SELECT supersedes_id FROM dose_record WHERE supersedes_id IS NOT NULL",
                      _REPLACED_ROW)
    rows = rows[~np.isin(rows["id"], replaced["id"])]
    return DoseRecords(
        person=person_index(rows["person"], people),
        quantity=rows["quantity"], location=rows["location"],
        wear_start=rows["start"].astype("datetime64[D]"), wear_end=rows["end"].astype("datetime64[D]"),
        value=rows["value"], result=rows["result"], mrd=rows["mrd"])


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


def evaluate_lab(session: Session, on: date, person_ids=None) -> LabEvaluation:
    """Read the records in force and evaluate everyone (or only `person_ids`) on `on` with the
    policies and limits of that date."""
    query = sa.select(Person.id, Person.category).order_by(Person.id)
    if person_ids is not None:
        query = query.where(Person.id.in_(np.asarray(person_ids).tolist()))
    chosen = session.execute(query).all()
    people, categories = zip(*chosen) if chosen else ((), ())
    person_ids = None if person_ids is None else np.asarray(people, dtype=np.int64)
    people = np.asarray(people, dtype=np.int64)
    records = read_records(session, people, person_ids)
    limit_set, policies = rules_on(session, on)
    start, end = pregnancy_windows(session, people, on, limit_set.whole_pregnancy)
    totals = compute_doses(records, len(people), on, policies, start, end)
    evaluation = evaluate(totals, limit_set,
                          np.asarray([str(c) for c in categories], dtype=str))
    if limit_set.whole_pregnancy and totals.windows.exists[:, code(PeriodKind.PREGNANCY)].any():
        declared = declaration_dates(session, people, on)
        before = fetal_dose_before(records, len(people), on, policies, start, declared)
        evaluation = with_declaration_allowance(evaluation, before, presets.DECLARATION_ALLOWANCE_MSV)
    return LabEvaluation(on, people, evaluation)
