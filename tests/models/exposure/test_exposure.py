"""Stored records evaluated through the engine: versions and pregnancy."""
from datetime import date

from models.doses.tables import DoseRecord
from models.exposure.evaluation import person_rows
from models.exposure.lab_ops import evaluate_lab
from models.exposure.tables import PregnancyDeclaration
from tests.conftest import put_in_force

ON = date(2026, 11, 30)


def _record(person, value, start=date(2026, 10, 1), end=date(2026, 10, 31), **extra):
    return DoseRecord(person_id=person.id, wear_start=start, wear_end=end, quantity="Hp(10)",
                      location="whole_body", value_msv=value, result="measured",
                      source="dosimetry_report", **extra)


def _row(lab, person, series, period):
    rows = person_rows(lab.evaluation, lab.row_of(person.id))
    return next(r for r in rows if r["series"] == series and r["period"] == period)


def test_only_the_current_version_counts(session, make_person):
    person = make_person()
    put_in_force(session, "icrp103")
    first = _record(person, 5.0)
    session.add(first)
    session.flush()
    session.add(_record(person, 0.5, supersedes_id=first.id, version=2, reason="badge mix-up"))
    session.commit()
    row = _row(evaluate_lab(session, ON), person, "effective", "year")
    assert row["dose_msv"] == 0.5
    assert row["limit_msv"] == 50.0  # ICRP Publication 103, Table 6: 50 mSv in a single year


def test_common_practice_level_one_in_the_quarter(session, make_person):
    person = make_person()
    put_in_force(session, "icrp103")
    session.add(_record(person, 1.5))
    session.commit()
    # common practice: 1.25 mSv Hp(10) per quarter is level I (REFERENCE.md, investigation levels)
    assert _row(evaluate_lab(session, ON), person, "effective", "quarter")["level"] == "level_1"


def test_pregnancy_window_follows_the_declaration(session, make_person):
    person = make_person()
    session.add(PregnancyDeclaration(person_id=person.id, declared_on=date(2026, 10, 16)))
    session.add(_record(person, 3.1))
    session.commit()
    row = _row(evaluate_lab(session, ON), person, "fetus", "pregnancy")
    assert row["start"] == "2026-10-16"
    assert abs(row["dose_msv"] - 3.1 * 16 / 31) < 1e-9  # 16 of the record's 31 days fall inside
