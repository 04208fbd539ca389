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
