"""The migrations build exactly the schema the models describe, on every backend."""
from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext

from models import Base
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
