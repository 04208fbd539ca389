"""Connection set-up that every engine gets, whoever creates it."""
from __future__ import annotations

import sqlite3

import sqlalchemy as sa
from sqlalchemy import event
from sqlalchemy.engine import Engine
from sqlalchemy.orm import Session


@event.listens_for(Engine, "connect")
def _sqlite_pragmas(dbapi_connection, _record) -> None:
    """SQLite: enforce foreign keys and use write-ahead logging on every connection."""
    if not isinstance(dbapi_connection, sqlite3.Connection):
        return
    cursor = dbapi_connection.cursor()
    cursor.execute("PRAGMA foreign_keys=ON")
    cursor.execute("PRAGMA journal_mode=WAL")
    cursor.execute("PRAGMA busy_timeout=5000")
    cursor.close()


# Any fixed number: the advisory lock that serialises writers of the audit chain on PostgreSQL.
WRITE_LOCK_KEY = 7_214_003


def hold_write_lock(session: Session) -> None:
    """Hold the database's write lock until the commit, so a check and the write it allows are one step.

    SQLite: pysqlite runs reads outside a transaction and opens one only at the first write, so a
    check-then-insert would race; BEGIN IMMEDIATE takes the single writer lock now (waiting up to the
    busy timeout) and makes other writers wait until we commit. When this connection has already
    written, it holds that lock already. PostgreSQL: constraints decide (an exclusion constraint for
    overlapping sessions), and the audit chain's advisory lock is taken now rather than at the first
    flush: a writer that held it while waiting on another's uncommitted row, which in turn waits
    for the chain, would deadlock.
    """
    connection = session.connection()
    if connection.dialect.name == "postgresql":
        connection.execute(sa.text("SELECT pg_advisory_xact_lock(:k)"), {"k": WRITE_LOCK_KEY})
        return
    if connection.dialect.name != "sqlite":
        return
    if not connection.connection.driver_connection.in_transaction:
        connection.exec_driver_sql("BEGIN IMMEDIATE")


def holds_write_lock(session: Session) -> bool:
    """Whether this session's transaction holds the write lock (it has written, or took the lock)."""
    connection = session.connection()
    if connection.dialect.name == "postgresql":
        return bool(connection.execute(sa.text(
            "SELECT 1 FROM pg_locks WHERE locktype = 'advisory' AND pid = pg_backend_pid() "
            "AND granted AND objid = :k"), {"k": WRITE_LOCK_KEY}).first())
    return connection.connection.driver_connection.in_transaction
