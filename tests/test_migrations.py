"""The migrations build exactly the schema the models describe, on every backend, and undo it."""
import importlib.util
import sqlite3
from datetime import UTC, date, datetime, timedelta
from pathlib import Path

import pytest
import sqlalchemy as sa
from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from alembic.operations import Operations
from flask_migrate import downgrade, upgrade

from models import Base
from models.audit.verify_ops import row_problems
from models.exposure.rules_ops import rule_history, rules_on
from models.sessions.tables import InstrumentSession
from tests.conftest import BACKENDS, LAB_TODAY, base_config, empty_postgres_database
from webapp import create_app
from webapp.extensions import db


def _differences() -> list:
    """What autogenerate would write to make the database match the models."""
    with db.engine.connect() as conn:
        context = MigrationContext.configure(conn, opts={"compare_type": True})
        return compare_metadata(context, Base.metadata)


def test_models_and_migrations_agree(app):
    diff = _differences()
    assert diff == [], f"models and migrations disagree; add a migration: {diff}"


def test_sqlite_has_foreign_keys_and_wal(app):
    if db.engine.dialect.name != "sqlite":
        return
    with db.engine.connect() as conn:
        assert conn.exec_driver_sql("PRAGMA foreign_keys").scalar() == 1
        assert conn.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"


@pytest.fixture(params=BACKENDS)
def empty_database_url(request, tmp_path):
    """A database with no tables at all, on each backend in turn."""
    if request.param == "sqlite":
        yield f"sqlite:///{tmp_path / 'empty.sqlite'}"
        return
    with empty_postgres_database() as url:
        yield url


def test_migrations_go_down_to_base_and_up_again(empty_database_url):
    app = create_app(base_config(empty_database_url))
    with app.app_context():
        upgrade()
        downgrade(revision="base")
        # Only Alembic's own bookkeeping table may outlive the downgrade, and it must be empty.
        assert set(sa.inspect(db.engine).get_table_names()) <= {"alembic_version"}
        upgrade()
        diff = _differences()
        db.engine.dispose()
    assert diff == [], f"after down and up again, models and migrations disagree: {diff}"


def test_the_rules_history_begins_with_the_rules_in_force_for_every_date(empty_database_url):
    """Migration 0031 copies the set and policies in force to a change applying from 1950-01-01."""
    app = create_app(base_config(empty_database_url))
    with app.app_context():
        upgrade(revision="0030")
        with db.engine.begin() as conn:
            conn.execute(sa.text("INSERT INTO limit_set (name, description, whole_pregnancy, created_at) "
                                 "VALUES ('Lab rules', '', false, '2026-01-05 09:00:00')"))
            conn.execute(sa.text("UPDATE lab_settings SET limit_set_id = (SELECT id FROM limit_set), "
                                 "mrd_policy = 'half', lens_source = 'hp10', five_year_first_year = 2021"))
        upgrade()
        (change,) = rule_history(db.session)
        assert (change.from_on, change.changed_by_id, change.changed_at) == (date(1950, 1, 1), None, None)
        for on in (date(1950, 1, 1), date(1999, 6, 30), LAB_TODAY):
            limit_set, policies = rules_on(db.session, on)
            assert limit_set.name == "Lab rules"
            assert (policies.proration, policies.mrd, policies.lens_source, policies.first_block_year) == (
                "prorate_days", "half", "hp10", 2021)
        # The rows the migrations wrote outside the ORM are in the audit trail's baseline.
        assert row_problems(db.session) == []
        db.session.close()
        db.engine.dispose()


def test_flask_db_upgrade_gives_a_new_database_the_zone_in_lab_timezone(tmp_path, monkeypatch):
    monkeypatch.setenv("LAB_TIMEZONE", "America/Chicago")
    path = tmp_path / "zoned.sqlite"
    app = create_app({"SQLALCHEMY_DATABASE_URI": f"sqlite:///{path}", "SECRET_KEY": "test"})
    result = app.test_cli_runner().invoke(args=["db", "upgrade"])
    with app.app_context():
        db.engine.dispose()
    assert result.exit_code == 0, result.output
    with sqlite3.connect(path) as conn:
        assert conn.execute("SELECT timezone FROM lab_settings").fetchall() == [("America/Chicago",)]


def test_an_unknown_lab_timezone_stops_the_app_and_names_the_setting(monkeypatch):
    monkeypatch.setenv("LAB_TIMEZONE", "Mars/Olympus_Mons")
    with pytest.raises(ValueError, match="LAB_TIMEZONE: unknown time zone 'Mars/Olympus_Mons'"):
        create_app({"SECRET_KEY": "test"})


def test_postgresql_refuses_overlapping_sessions_in_the_schema(app):
    """The exclusion constraint lives only in migration 0015, so check that it is there."""
    if db.engine.dialect.name != "postgresql":
        return
    with db.engine.connect() as conn:
        definition = conn.exec_driver_sql(
            "SELECT pg_get_constraintdef(oid) FROM pg_constraint "
            "WHERE conname = 'ex_instrument_session_no_overlap'").scalar()
    assert definition == ("EXCLUDE USING gist (instrument_id WITH =, "
                          "tsrange(started_at, ended_at, '[)'::text) WITH &&)")


def test_the_no_overlap_migration_refuses_a_database_that_already_has_overlaps(
        app, make_person, make_instrument):
    """Migration 0015 names the overlapping sessions and changes nothing, rather than failing obscurely."""
    if db.engine.dialect.name != "postgresql":
        return
    path = Path(__file__).parent.parent / "migrations" / "versions" / "0015_sessions_never_overlap.py"
    spec = importlib.util.spec_from_file_location("migration_0015", path)
    migration = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(migration)
    operator, instrument = make_person("op"), make_instrument()
    start = datetime(2026, 3, 2, 9, 0, tzinfo=UTC)
    row = {"instrument_id": instrument.id, "operator_id": operator.id, "kv": 40.0, "ma": 40.0,
           "purpose": "", "configuration_changed": False, "alignment": False,
           "pre_use_checks_confirmed": True, "dosimeter_worn": False, "source": "api", "created_at": start}
    with db.engine.connect() as conn:
        conn.begin()  # PostgreSQL's DDL is transactional: all of this is rolled back below
        conn.exec_driver_sql(f"ALTER TABLE instrument_session DROP CONSTRAINT {migration.NAME}")
        ids = [conn.execute(InstrumentSession.__table__.insert().returning(InstrumentSession.id).values(
            **row, started_at=start + timedelta(minutes=m), ended_at=start + timedelta(minutes=m + 60))).scalar()
            for m in (0, 30)]
        with Operations.context(MigrationContext.configure(conn)), pytest.raises(RuntimeError) as refused:
            migration.upgrade()
        conn.rollback()
    assert f"session ids {ids[0]} and {ids[1]}" in str(refused.value)
