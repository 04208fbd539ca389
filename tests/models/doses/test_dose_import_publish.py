"""An import stages its rows without the write lock and publishes them in one short step.

Other writers go on between the staged chunks; what they change meanwhile is checked again when
the rows are published, and the file still goes in completely or not at all.
"""
from contextlib import contextmanager
from datetime import date, timedelta

import pytest
import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.audit.verify_ops import row_problems, verify_chain
from models.core.codes import Location, Quantity, Result
from models.doses import import_ops
from models.doses.import_ops import PRODUCT_LAYOUT, Refused, import_report
from models.doses.tables import DoseRecord, DoseSource, Dosimeter, ImportBatch, ImportStaging
from models.people.person_ops import add_person
from models.people.tables import Person, Role
from tests.models.doses.test_dose_import import report
from webapp.extensions import db

ROWS = [  # six months of one badge, three to a chunk below; the header is line 1
    f"ann,B-1,2026-{m:02d}-01,{(date(2026, m + 1, 1) - timedelta(days=1)).isoformat()},"
    "Hp(10),whole_body,0.1,mSv,measured," for m in range(1, 7)]


@pytest.fixture
def ann(make_person, make_dosimeter):
    """The wearer of badge B-1, which every row names."""
    person = make_person("ann")
    make_dosimeter(person, serial="B-1")
    return person


@contextmanager
def impatient_session():
    """A session on a connection of its own that refuses to wait for any lock."""
    engine = sa.create_engine(db.engine.url)
    try:
        with Session(engine) as other:
            connection = other.connection()
            if connection.dialect.name == "sqlite":
                connection.exec_driver_sql("PRAGMA busy_timeout=0")
            else:
                connection.exec_driver_sql("SET lock_timeout = '100ms'")
            yield other
    finally:
        engine.dispose()


@pytest.fixture
def after_first_chunk(monkeypatch):
    """Chunks of three rows; `after_first_chunk(action)` runs action in an impatient session of
    its own, committed, once the first chunk is staged."""
    monkeypatch.setattr(import_ops, "CHUNK", 3)
    actions = []
    write = import_ops._Stage.write

    def write_then_act(stage, rows):
        write(stage, rows)
        while actions:
            with impatient_session() as other:
                actions.pop()(other)
                other.commit()

    monkeypatch.setattr(import_ops._Stage, "write", write_then_act)
    return actions.append


def count(model) -> int:
    """Rows of a table."""
    return db.session.scalar(sa.select(sa.func.count()).select_from(model))


def test_another_writer_commits_between_the_staged_chunks(session, ann, after_first_chunk):
    after_first_chunk(lambda other: add_person(other, login="bea", name="Bea", email="bea@example.org",
                                               roles={Role.OPERATOR}, password_hash="!"))
    preview = import_report(session, report(ROWS), PRODUCT_LAYOUT, "r.csv")
    session.commit()
    assert session.scalar(sa.select(Person.name).where(Person.login == "bea")) == "Bea"
    assert preview.batch.row_count == 6 and count(DoseRecord) == 6
    assert count(ImportStaging) == 0
    assert verify_chain(session) is None and row_problems(session) == []


def _record(other: Session, start: date, end: date, dosimeter_id=None) -> None:
    """A current Hp(10) record of ann's, added by another writer."""
    other.add(DoseRecord(person_id=other.scalar(sa.select(Person.id).where(Person.login == "ann")),
                         dosimeter_id=dosimeter_id, wear_start=start, wear_end=end, quantity=Quantity.HP10,
                         location=Location.WHOLE_BODY, value_msv=0.2, result=Result.MEASURED,
                         source=DoseSource.DOSIMETRY_REPORT))


@pytest.mark.parametrize("added, field, words", [
    # The same person, quantity, location and wear period as line 3 (February).
    (lambda other, badge: _record(other, date(2026, 2, 1), date(2026, 2, 28)), "duplicate", "already exists"),
    # The same badge for days of line 2 (January), another period.
    (lambda other, badge: _record(other, date(2026, 1, 10), date(2026, 1, 20), badge), "wear_start",
     "overlaps this wear period"),
])
def test_a_record_added_meanwhile_refuses_the_whole_file_at_publish(session, ann, after_first_chunk,
                                                                      added, field, words):
    badge = session.scalar(sa.select(Dosimeter.id).where(Dosimeter.serial == "B-1"))
    after_first_chunk(lambda other: added(other, badge))
    with pytest.raises(Refused, match="1 of 6 rows have errors; nothing was imported") as refused:
        import_report(session, report(ROWS), PRODUCT_LAYOUT, "r.csv")
    bad = refused.value.preview.bad_rows
    assert [r.line for r in bad] == [3 if field == "duplicate" else 2] and words in bad[0].errors[field]
    session.rollback()
    assert count(DoseRecord) == 1 and count(ImportBatch) == 0  # only the other writer's record
    assert verify_chain(session) is None and row_problems(session) == []


def test_a_refused_file_leaves_nothing_staged(session, ann, monkeypatch):
    monkeypatch.setattr(import_ops, "CHUNK", 3)
    rows = [*ROWS[:5], ROWS[5].replace(",0.1,", ",-1,")]  # the bad row is in the second chunk
    with pytest.raises(Refused, match="1 of 6 rows have errors"):
        import_report(session, report(rows), PRODUCT_LAYOUT, "r.csv")
    session.rollback()
    assert count(ImportStaging) == 0 and count(DoseRecord) == 0


def test_rows_left_by_an_abandoned_run_are_removed_by_a_later_import(session, ann):
    staged = ImportStaging.__table__
    now = import_ops.utcnow()
    left = {"person_id": ann.id, "line": 2, "wear_start": date(2026, 1, 1), "wear_end": date(2026, 1, 31),
            "quantity": Quantity.HP10, "location": Location.WHOLE_BODY, "result": Result.MEASURED,
            "source": DoseSource.DOSIMETRY_REPORT, "entered_unit": "mSv"}
    session.execute(sa.insert(staged), [
        {**left, "run": "killed", "staged_at": now - import_ops.STALE_AFTER - timedelta(minutes=1)},
        {**left, "run": "running", "staged_at": now - timedelta(minutes=5)}])
    session.commit()
    import_report(session, report(ROWS[:1]), PRODUCT_LAYOUT, "r.csv")
    session.commit()
    assert session.scalars(sa.select(staged.c.run)).all() == ["running"]
    assert count(DoseRecord) == 1


def test_on_postgresql_a_record_added_while_the_rows_go_in_is_still_caught(session, ann, monkeypatch):
    """PostgreSQL: the rows go in before the lock (unseen by others until the commit), so another
    writer can commit meanwhile; the check under the lock sees what it wrote."""
    if session.connection().dialect.name != "postgresql":
        pytest.skip("on SQLite the rows' insert takes the write lock: nobody else writes meanwhile")
    take_lock = import_ops.hold_write_lock

    def add_then_lock(this_session):
        with impatient_session() as other:
            _record(other, date(2026, 4, 1), date(2026, 4, 30))  # line 5 (April)
            other.commit()
        take_lock(this_session)

    monkeypatch.setattr(import_ops, "hold_write_lock", add_then_lock)
    with pytest.raises(Refused, match="1 of 6 rows have errors") as refused:
        import_report(session, report(ROWS), PRODUCT_LAYOUT, "r.csv")
    assert [r.line for r in refused.value.preview.bad_rows] == [5]
    session.rollback()
    assert count(DoseRecord) == 1 and count(ImportBatch) == 0
