"""The stored evaluation: equal to a fresh one, kept in step in the changing transaction, shared."""
from dataclasses import fields
from datetime import date, timedelta

import numpy as np
import pytest
import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core import base
from models.core.codes import Location, Quantity, Result, WorkerCategory
from models.doses.import_ops import PRODUCT_LAYOUT, commit_report, validate_report
from models.doses.record_ops import DoseEntry, add_dose_record, amend_dose_record
from models.doses.tables import DoseRecord
from models.exposure import figures_ops
from models.exposure.evaluation import person_rows
from models.exposure.figures_ops import lab_evaluation, rules_marker
from models.exposure.lab_ops import evaluate_lab
from models.exposure.rules_ops import rules_on
from models.exposure.tables import ExposureFigures, PregnancyDeclaration
from tests.conftest import LAB_NOW, LAB_TODAY
from tests.models.doses.test_dose_import import report

JANUARY = {"wear_start": date(2026, 1, 1), "wear_end": date(2026, 1, 31)}
FEBRUARY = {"wear_start": date(2026, 2, 1), "wear_end": date(2026, 2, 28)}


def year_dose(lab, person) -> float | None:
    """The person's Hp(10) whole-body dose this calendar year, from an evaluation."""
    rows = person_rows(lab.evaluation, lab.row_of(person.id))
    return next(r["dose_msv"] for r in rows if r["series"] == "effective" and r["period"] == "year")


def stored_rows(session) -> list[tuple]:
    """(person, date, rules) of every stored figures row."""
    table = ExposureFigures.__table__
    return session.execute(sa.select(table.c.person_id, table.c.evaluated_on, table.c.rules)
                           .order_by(table.c.person_id)).all()


def entry(person, value, **period) -> DoseEntry:
    """A measured Hp(10) whole-body result."""
    return DoseEntry(person_id=person.id, quantity=Quantity.HP10, location=Location.WHOLE_BODY,
                     result=Result.MEASURED, value=value, **(period or JANUARY))


def assert_same_evaluation(stored, fresh) -> None:
    """Every array of two evaluations is equal (NaN where the other has NaN)."""
    assert stored.on == fresh.on and np.array_equal(stored.person_ids, fresh.person_ids)
    for source, other in ((stored.evaluation, fresh.evaluation),
                          (stored.evaluation.totals, fresh.evaluation.totals),
                          (stored.evaluation.totals.windows, fresh.evaluation.totals.windows)):
        for field in fields(source):
            mine, theirs = getattr(source, field.name), getattr(other, field.name)
            if isinstance(mine, np.ndarray):
                assert mine.dtype == theirs.dtype, field.name
                if mine.dtype.kind == "M":  # NaT never equals NaT; its integer does
                    mine, theirs = mine.view(np.int64), theirs.view(np.int64)
                assert np.array_equal(mine, theirs, equal_nan=mine.dtype.kind == "f"), field.name


def test_stored_figures_equal_a_fresh_evaluation_on_random_records(session, make_person, use_limit_set):
    use_limit_set("cfr10_20")  # whole-pregnancy fetal rule: the declaration allowance is stored too
    rng = np.random.default_rng(20261202)
    people = [make_person(category=c) for c in (WorkerCategory.ADULT_WORKER,) * 6
              + (WorkerCategory.TRAINEE, WorkerCategory.PUBLIC)]
    for _ in range(60):
        person = people[rng.integers(len(people))]
        start = LAB_TODAY - timedelta(days=int(rng.integers(1, 2200)))
        end = start + timedelta(days=int(rng.integers(0, 60)))
        value = None if rng.random() < 0.1 else round(float(rng.exponential(1.5)), 3)
        result = Result.MEASURED if value is not None else Result.LOST
        quantity, location = [(Quantity.HP10, Location.WHOLE_BODY), (Quantity.HP007, Location.WHOLE_BODY),
                              (Quantity.HP3, Location.EYE), (Quantity.HP10, Location.ABDOMEN)][rng.integers(4)]
        record = add_dose_record(session, DoseEntry(
            person_id=person.id, wear_start=start, wear_end=end, quantity=quantity, location=location,
            result=result, value=value))
        if rng.random() < 0.15:
            amend_dose_record(session, record, DoseEntry(
                person_id=person.id, wear_start=start, wear_end=end, quantity=quantity, location=location,
                result=Result.MEASURED, value=0.5), "Corrected by the dosimetry service.")
    session.add(PregnancyDeclaration(person_id=people[0].id, declared_on=LAB_TODAY - timedelta(days=40)))
    session.commit()
    stored = figures_ops._stored(session, LAB_TODAY)
    assert stored is not None  # every person's figures were stored with their changes
    assert_same_evaluation(stored, evaluate_lab(session, LAB_TODAY))


def test_a_dose_change_is_stored_with_it_and_a_rollback_takes_it_back(session, make_person, make_dose,
                                                                   make_instrument):
    ada = make_person("ada")
    make_dose(ada, value=0.42, **JANUARY)
    assert year_dose(lab_evaluation(session, LAB_TODAY), ada) == pytest.approx(0.42)
    add_dose_record(session, entry(ada, 0.37, **FEBRUARY))
    # The same transaction reads its own change: 0.42 + 0.37 = 0.79 mSv.
    assert year_dose(lab_evaluation(session, LAB_TODAY), ada) == pytest.approx(0.79)
    session.rollback()
    assert year_dose(lab_evaluation(session, LAB_TODAY), ada) == pytest.approx(0.42)
    make_instrument()  # an unrelated write, which on SQLite takes the rolled-back ids again
    assert year_dose(lab_evaluation(session, LAB_TODAY), ada) == pytest.approx(0.42)


def test_a_change_committed_on_one_connection_is_read_on_another(database_url, session, make_person,
                                                                 make_dose):
    ada = make_person("ada")
    make_dose(ada, value=0.42, **JANUARY)
    other_engine = sa.create_engine(database_url)
    try:
        with Session(other_engine) as other:
            assert year_dose(lab_evaluation(other, LAB_TODAY), ada) == pytest.approx(0.42)
            other.rollback()
            make_dose(ada, value=0.37, **FEBRUARY)
            assert year_dose(lab_evaluation(other, LAB_TODAY), ada) == pytest.approx(0.79)
    finally:
        other_engine.dispose()


def test_only_the_changed_person_is_evaluated_again(session, make_person, make_dose, monkeypatch):
    ada, bo = make_person("ada"), make_person("bo")
    lab_evaluation(session, LAB_TODAY)
    calls = []
    real = figures_ops.evaluate_lab
    monkeypatch.setattr(figures_ops, "evaluate_lab", lambda *a: calls.append(a[2:]) or real(*a))
    make_dose(bo, value=0.2, **JANUARY)
    lab = lab_evaluation(session, LAB_TODAY)
    assert calls == [([bo.id],)]
    # Ada has no result: no dose at all, not 0 mSv.
    assert year_dose(lab, bo) == pytest.approx(0.2) and year_dose(lab, ada) is None


def test_a_version_recorded_against_another_wearer_changes_both(session, make_person, make_dose):
    """Corrections keep the person now, but versions on file may name another (record_versions)."""
    ada, bo = make_person("ada"), make_person("bo")
    wrong = make_dose(ada, value=0.42, **JANUARY)
    session.add(DoseRecord(person_id=bo.id, wear_start=wrong.wear_start, wear_end=wrong.wear_end,
                           quantity=wrong.quantity, location=wrong.location, value_msv=0.42,
                           result=wrong.result, source=wrong.source, supersedes_id=wrong.id, version=2,
                           reason="The badge was Bo's."))
    session.commit()
    lab = figures_ops._stored(session, LAB_TODAY)
    assert year_dose(lab, ada) is None and year_dose(lab, bo) == pytest.approx(0.42)


def test_the_date_rollover_evaluates_everyone_once(session, make_person, make_dose, monkeypatch):
    ada, bo = make_person("ada"), make_person("bo")
    make_dose(ada, value=0.42, **JANUARY)
    assert {row[1] for row in stored_rows(session)} == {LAB_TODAY}
    tomorrow = LAB_TODAY + timedelta(days=1)
    monkeypatch.setattr(base, "clock", lambda: LAB_NOW + timedelta(days=1))
    calls = []
    real = figures_ops.evaluate_lab
    monkeypatch.setattr(figures_ops, "evaluate_lab", lambda *a: calls.append(a[1:]) or real(*a))
    assert year_dose(lab_evaluation(session, tomorrow), ada) == pytest.approx(0.42)
    assert year_dose(lab_evaluation(session, tomorrow), bo) is None
    assert calls == [(tomorrow,)]  # everyone at once, and only by the first reader
    assert [(row[0], row[1]) for row in stored_rows(session)] == [(ada.id, tomorrow), (bo.id, tomorrow)]


def test_a_bulk_import_updates_the_figures(session, make_person):
    ada = make_person("ada")
    lab_evaluation(session, LAB_TODAY)
    rows = ["ada,,2026-10-01,2026-10-31,Hp(10),whole_body,0.9,mSv,measured,",
            "ada,,2026-11-01,2026-11-30,Hp(10),whole_body,0.6,mSv,measured,"]
    commit_report(session, validate_report(session, report(rows), PRODUCT_LAYOUT, "q4.csv"))
    session.commit()
    assert year_dose(figures_ops._stored(session, LAB_TODAY), ada) == pytest.approx(1.5)  # 0.9 + 0.6


def test_a_large_import_is_evaluated_a_group_at_a_time(session, make_person, monkeypatch):
    """Groups of one person here stand in for the groups of a few hundred of a large report."""
    monkeypatch.setattr(figures_ops, "_GROUP", 1)
    ada, bo, cy = make_person("ada"), make_person("bo"), make_person("cy")
    lab_evaluation(session, LAB_TODAY)
    rows = ["ada,,2026-10-01,2026-10-31,Hp(10),whole_body,0.9,mSv,measured,",
            "bo,,2026-10-01,2026-10-31,Hp(10),whole_body,0.4,mSv,measured,",
            "cy,,2026-11-01,2026-11-30,Hp(10),whole_body,0.2,mSv,measured,"]
    commit_report(session, validate_report(session, report(rows), PRODUCT_LAYOUT, "october.csv"))
    session.commit()
    stored = figures_ops._stored(session, LAB_TODAY)
    assert [year_dose(stored, p) for p in (ada, bo, cy)] == pytest.approx([0.9, 0.4, 0.2])


def test_a_change_of_rules_stores_everyone_again_in_its_transaction(session, make_person, use_limit_set):
    make_person("ada"), make_person("bo")
    before = {row[2] for row in stored_rows(session)}
    use_limit_set("icrp103")
    marker = rules_marker(*rules_on(session, LAB_TODAY))
    assert {row[2] for row in stored_rows(session)} == {marker} != before


def test_figures_altered_in_the_database_are_evaluated_afresh(session, make_person, make_dose):
    """Stored bytes are only ever read as numbers; a row of the wrong size or with codes out of
    range is not used."""
    ada = make_person("ada")
    make_dose(ada, value=0.42, **JANUARY)
    table = ExposureFigures.__table__
    for figures in (b"\x80\x04K\x01.", b"\xff" * figures_ops.LAYOUT.itemsize):  # a pickle; all 0xff
        session.execute(table.update().values(figures=figures))
        session.commit()
        assert year_dose(lab_evaluation(session, LAB_TODAY), ada) == pytest.approx(0.42)


def test_a_change_of_category_evaluates_the_person_again_and_a_new_name_does_not(
        session, make_person, monkeypatch):
    ada = make_person("ada")
    lab_evaluation(session, LAB_TODAY)
    calls = []
    real = figures_ops.evaluate_lab
    monkeypatch.setattr(figures_ops, "evaluate_lab", lambda *a: calls.append(a[2:]) or real(*a))
    ada.name = "Ada Lovelace"
    session.commit()
    assert calls == []
    ada.category = WorkerCategory.PUBLIC
    session.commit()
    assert calls == [([ada.id],)]
