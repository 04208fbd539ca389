"""Database triggers that refuse UPDATE and DELETE on rows that are only ever added.

Dose records change by new versions and the audit trail only grows, so any UPDATE or DELETE on
them comes from outside the app. The triggers stop casual and accidental edits; a database owner
can still drop them, which the sealed chain and the row check of `flask audit verify` then show.
"""
from __future__ import annotations

import sqlalchemy as sa

GUARDED_TABLES = ("dose_record", "audit_event")
REFUSAL = "rows of this table are never changed or deleted"
_PG_FUNCTION = "refuse_change_of_kept_rows"


def create_statements(dialect: str) -> list[str]:
    """SQL creating the guard triggers on this database."""
    if dialect == "postgresql":
        return [
            f"CREATE OR REPLACE FUNCTION {_PG_FUNCTION}() RETURNS trigger LANGUAGE plpgsql AS $$ "
            f"BEGIN RAISE EXCEPTION USING MESSAGE = TG_OP || ' on ' || TG_TABLE_NAME || ': {REFUSAL}'; "
            "END $$",
            *(f"CREATE TRIGGER {t}_kept BEFORE UPDATE OR DELETE ON {t} "
              f"FOR EACH ROW EXECUTE FUNCTION {_PG_FUNCTION}()" for t in GUARDED_TABLES),
        ]
    return [f"CREATE TRIGGER {t}_kept_{op.lower()} BEFORE {op} ON {t} "
            f"BEGIN SELECT RAISE(ABORT, '{op} on {t}: {REFUSAL}'); END"
            for t in GUARDED_TABLES for op in ("UPDATE", "DELETE")]


def drop_statements(dialect: str) -> list[str]:
    """SQL removing the guard triggers (a downgrade, or an insider's first step)."""
    if dialect == "postgresql":
        return [*(f"DROP TRIGGER IF EXISTS {t}_kept ON {t}" for t in GUARDED_TABLES),
                f"DROP FUNCTION IF EXISTS {_PG_FUNCTION}()"]
    return [f"DROP TRIGGER IF EXISTS {t}_kept_{op.lower()}"
            for t in GUARDED_TABLES for op in ("UPDATE", "DELETE")]


def run(conn: sa.Connection, statements: list[str]) -> None:
    """Execute DDL statements in order."""
    for statement in statements:
        conn.exec_driver_sql(statement)


def _expected(dialect: str) -> set[str]:
    """Names of the guard triggers this database should have."""
    if dialect == "postgresql":
        return {f"{t}_kept" for t in GUARDED_TABLES}
    return {f"{t}_kept_{op}" for t in GUARDED_TABLES for op in ("update", "delete")}


def missing(conn: sa.Connection) -> list[str]:
    """Guard triggers that were dropped or disabled (a table rebuilt by a migration loses them too)."""
    dialect = conn.dialect.name
    if dialect == "postgresql":
        query = "SELECT tgname FROM pg_trigger WHERE NOT tgisinternal AND tgenabled <> 'D'"
    else:
        query = "SELECT name FROM sqlite_master WHERE type = 'trigger'"
    present = set(conn.exec_driver_sql(query).scalars())
    return sorted(_expected(dialect) - present)
