"""The migrations build exactly the schema the models describe, on every backend."""
import importlib.util
from datetime import UTC, datetime, timedelta
from pathlib import Path

import pytest
from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from alembic.operations import Operations

from models import Base
from models.sessions.tables import InstrumentSession
from webapp.extensions import db


def test_models_and_migrations_agree(app):
    with db.engine.connect() as conn:
        context = MigrationContext.configure(conn, opts={"compare_type": True})
        diff = compare_metadata(context, Base.metadata)
    assert diff == [], f"models and migrations disagree; add a migration: {diff}"


def test_sqlite_has_foreign_keys_and_wal(app):
    if db.engine.dialect.name != "sqlite":
        return
    with db.engine.connect() as conn:
        assert conn.exec_driver_sql("PRAGMA foreign_keys").scalar() == 1
        assert conn.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"


def test_a_new_database_takes_its_time_zone_from_the_environment(tmp_path, monkeypatch):
    import sqlite3

    from tests.conftest import migrate_to_head

    monkeypatch.setenv("LAB_TIMEZONE", "America/Chicago")
    path = tmp_path / "zoned.sqlite"
    migrate_to_head(f"sqlite:///{path}")
    with sqlite3.connect(path) as conn:
        assert conn.execute("SELECT timezone FROM lab_settings").fetchone() == ("America/Chicago",)


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
