"""The migrations build exactly the schema the models describe, on every backend, and undo it."""
import sqlite3

import pytest
import sqlalchemy as sa
from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from flask_migrate import downgrade, upgrade

from models import Base
from tests.conftest import BACKENDS, base_config, empty_postgres_database
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
