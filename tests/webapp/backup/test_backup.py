"""`flask backup` copies a live database consistently; the copy restores and verifies."""
import threading
from datetime import date, timedelta

import psycopg
import pytest
import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.codes import Location, Quantity, Result
from models.doses.record_ops import DoseEntry, add_dose_record
from models.doses.tables import DoseRecord
from tests.conftest import PG_ADMIN_URL, base_config
from webapp import create_app
from webapp.extensions import db


class Writers:
    """Threads adding dose records, each noting the ids whose commit returned (acknowledged)."""

    def __init__(self, engine, people: list[int]):
        self.engine, self.people = engine, people
        self.acknowledged: list[int] = []
        self.stop = threading.Event()
        self.threads = [threading.Thread(target=self._write, args=(p,)) for p in people]

    def _write(self, person_id: int) -> None:
        """One wearer's records, one day each from 2020-01-01, until told to stop."""
        day = 0
        while not self.stop.is_set():
            start = date(2020, 1, 1) + timedelta(days=day)
            with Session(self.engine) as session:
                record = add_dose_record(session, DoseEntry(
                    person_id=person_id, wear_start=start, wear_end=start, quantity=Quantity.HP10,
                    location=Location.WHOLE_BODY, result=Result.MEASURED, value=0.1))
                try:
                    session.commit()
                except sa.exc.OperationalError:  # busy: not acknowledged, try the next day
                    session.rollback()
                else:
                    self.acknowledged.append(record.id)
            day += 1

    def __enter__(self):
        for thread in self.threads:
            thread.start()
        return self

    def wait_for(self, count: int) -> None:
        """Block until at least `count` records were acknowledged."""
        while len(self.acknowledged) < count:
            self.stop.wait(0.01)

    def __exit__(self, *_exc):
        self.stop.set()
        for thread in self.threads:
            thread.join()


def _verify(url: str) -> tuple[int, set[int]]:
    """Run `flask audit verify` against a restored database; exit code and the dose record ids there."""
    restored = create_app(base_config(url))
    with restored.app_context():
        result = restored.test_cli_runner().invoke(args=["audit", "verify"])
        ids = set(db.session.scalars(sa.select(DoseRecord.id)))
        db.session.remove()
        db.engine.dispose()
    assert result.exit_code == 0, result.output
    return result.exit_code, ids


def _backup_while_writing(app, session, make_person, target) -> list[int]:
    """Take a backup while three threads write; return the ids acknowledged before it began."""
    people = [make_person().id for _ in range(3)]
    with Writers(db.engine, people) as writers:
        writers.wait_for(20)
        before = list(writers.acknowledged)
        result = app.test_cli_runner().invoke(args=["backup", str(target)])
        assert result.exit_code == 0, result.output
        assert "audit-anchor count=" in result.output
        writers.wait_for(len(before) + 10)  # writes went on while the backup ran
    return before


def test_a_sqlite_backup_during_writes_restores_and_verifies(app, session, make_person, tmp_path):
    if db.engine.dialect.name != "sqlite":
        pytest.skip("the SQLite backup API; PostgreSQL is tested with pg_dump below")
    target = tmp_path / "backup.sqlite"
    before = _backup_while_writing(app, session, make_person, target)
    _, restored = _verify(f"sqlite:///{target}")
    assert set(before) <= restored


def test_a_pg_dump_during_writes_restores_and_verifies(app, session, make_person, tmp_path):
    import shutil
    import subprocess
    import uuid

    if db.engine.dialect.name != "postgresql":
        pytest.skip("pg_dump and pg_restore are for PostgreSQL")
    if shutil.which("pg_restore") is None:
        pytest.skip("pg_dump / pg_restore not installed")
    target = tmp_path / "backup.dump"
    before = _backup_while_writing(app, session, make_person, target)
    name = f"logbook_restore_{uuid.uuid4().hex[:12]}"
    base = PG_ADMIN_URL.rsplit("/", 1)[0]
    with psycopg.connect(PG_ADMIN_URL, autocommit=True) as admin:
        admin.execute(f'CREATE DATABASE "{name}"')
        try:
            done = subprocess.run(["pg_restore", "--no-owner", f"--dbname={base}/{name}", str(target)],
                                  capture_output=True, text=True, check=False)
            assert done.returncode == 0, done.stderr
            _, restored = _verify(f"{base.replace('postgresql://', 'postgresql+psycopg://')}/{name}")
        finally:
            admin.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')
    assert set(before) <= restored


def test_backup_refuses_to_overwrite(app, tmp_path):
    target = tmp_path / "exists.sqlite"
    target.write_text("keep me")
    result = app.test_cli_runner().invoke(args=["backup", str(target)])
    assert result.exit_code != 0 and "already exists" in result.output
    assert target.read_text() == "keep me"
