"""Hash-chained audit trail written automatically for every flushed change."""
from __future__ import annotations

import enum
import hashlib
import hmac
import json
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import UTC, date, datetime
from typing import Any

import sqlalchemy as sa
from sqlalchemy import event, inspect
from sqlalchemy.orm import Session

from models.audit.tables import AuditEvent
from models.core.base import utcnow
from models.core.database import WRITE_LOCK_KEY

GENESIS_HASH = "0" * 64
# An event standing for many rows added in one statement (see bulk_event).
BULK_CREATE = "bulk_create"
# Secrets (columns ending in _hash) enter the trail only as a keyed digest, never as themselves.
REDACTED_SUFFIX = "_hash"
# The sealing key lives outside the database (AUDIT_KEY); the app hands it over when it starts.
_SEAL: dict[str, bytes] = {}


def use_key(key: str | bytes) -> None:
    """Seal every event from now on with this secret (kept outside the database)."""
    _SEAL["key"] = key.encode() if isinstance(key, str) else key


def _key() -> bytes:
    """The sealing key; refusing to write an unsealed trail rather than writing a forgeable one."""
    if not _SEAL.get("key"):
        raise RuntimeError("No audit key configured (AUDIT_KEY); the audit trail cannot be sealed.")
    return _SEAL["key"]


def _plain(value: Any) -> Any:
    """Turn a column value into a JSON value."""
    if isinstance(value, enum.Enum):
        return value.value
    if isinstance(value, datetime) and value.tzinfo is not None:
        # One spelling per moment, so a stored row compares equal to the event that wrote it.
        return value.astimezone(UTC).isoformat()
    if isinstance(value, (datetime, date)):
        return value.isoformat()
    return value


def _plain_or_text(value: Any) -> Any:
    """A value JSON cannot write itself (dates, enums), as the trail shows it."""
    plain = _plain(value)
    return str(plain) if plain is value else plain


def event_hash(fields: dict[str, Any], key: bytes | None = None) -> str:
    """HMAC-SHA256, keyed by the audit key, over the canonical JSON of an event and the previous hash.

    Without the key nobody can recompute a chain after changing it, not even with this function.
    """
    canonical = json.dumps(fields, sort_keys=True, separators=(",", ":"), default=str)
    return hmac.new(key or _key(), canonical.encode(), hashlib.sha256).hexdigest()


def content(row: Any) -> dict[str, Any]:
    """The hashed fields of an audit row (mapped object or Core row)."""
    return {
        "at": _plain(row.at),
        "actor_id": row.actor_id,
        "entity": row.entity,
        "entity_id": row.entity_id,
        "action": row.action,
        "before": row.before,
        "after": row.after,
        "reason": row.reason,
        "prev_hash": row.prev_hash,
    }


def _column_value(key: str, value: Any) -> Any:
    """A column's value as the trail shows it."""
    if key.endswith(REDACTED_SUFFIX) and value is not None:
        # A keyed digest: shows that a secret was swapped without revealing anything about it.
        return f"(secret {hmac.new(_key(), str(value).encode(), hashlib.sha256).hexdigest()[:16]})"
    return _plain(value)


def _snapshot(obj: Any) -> dict[str, Any]:
    """Every column of a mapped object."""
    mapper = inspect(obj).mapper
    return {a.key: _column_value(a.key, getattr(obj, a.key)) for a in mapper.column_attrs}


def row_snapshot(row: sa.Row) -> dict[str, Any]:
    """Every column of a stored row, as an event's "after" shows it."""
    return {k: _column_value(k, v) for k, v in row._mapping.items()}


def bulk_columns(table: sa.Table) -> tuple[str, ...]:
    """The columns a bulk event's row digest covers: every one but the id the database hands out."""
    return tuple(sorted(c.name for c in table.columns if c.name != "id"))


class RowsDigest:
    """SHA-256 over rows in the order written, each row as the trail shows its listed columns."""

    def __init__(self, columns: Iterable[str]) -> None:
        self.columns = tuple(columns)
        self.count = 0
        self._sha = hashlib.sha256()
        self._secrets = [c for c in self.columns if c.endswith(REDACTED_SUFFIX)]
        self._encode = json.JSONEncoder(separators=(",", ":"), default=_plain_or_text).encode

    def line(self, values: dict[str, Any]) -> bytes:
        """One row (column -> value, stored or about to be stored) as the digest reads it."""
        if self._secrets:
            values = {**values, **{c: _column_value(c, values.get(c)) for c in self._secrets}}
        # JSON writes text, numbers and None itself (a StrEnum as its value); the rest via _plain.
        return self._encode([values.get(c) for c in self.columns]).encode() + b"\n"

    def add(self, values: dict[str, Any]) -> None:
        """Feed one row (column -> value, stored or about to be stored)."""
        self.add_lines(self.line(values), 1)

    def add_lines(self, lines: bytes, count: int) -> None:
        """Feed `count` rows already turned into lines by `line`, in order."""
        self._sha.update(lines)
        self.count += count

    def hexdigest(self) -> str:
        """The digest so far."""
        return self._sha.hexdigest()


def bulk_event(table: sa.Table, group_column: str, group_id: int, digest: RowsDigest,
               **facts: Any) -> dict[str, Any]:
    """One event standing for every row of `table` written with `group_column = group_id`.

    Rows written with executemany skip the per-row listener; this event carries their count and
    a digest over them in order, so `flask audit verify` can recompute it from the stored rows.
    """
    return {"entity": table.name, "entity_id": None, "action": BULK_CREATE, "before": None,
            "after": {"group_column": group_column, "group_id": group_id, "columns": list(digest.columns),
                      "rows": digest.count, "rows_sha256": digest.hexdigest(), **facts}}


def _changes(obj: Any, stored: dict[str, Any]) -> tuple[dict[str, Any], dict[str, Any]]:
    """The changed columns of a dirty object, before and after."""
    state = inspect(obj)
    before, after = {}, {}
    for attr in state.mapper.column_attrs:
        hist = state.attrs[attr.key].history
        if hist.has_changes():
            old = hist.deleted[0] if hist.deleted else stored.get(attr.key)
            new = hist.added[0] if hist.added else None
            if old != new:
                before[attr.key] = _column_value(attr.key, old)
                after[attr.key] = _column_value(attr.key, new)
    return before, after


def _action(before: dict[str, Any], after: dict[str, Any]) -> str:
    """Name an update; switching a record off is called out as a deactivation."""
    if after.get("active") is False or (after.get("retired_at") and not before.get("retired_at")):
        return "deactivate"
    return "update"


def _pending_events(session: Session) -> Iterator[dict[str, Any]]:
    """Audit content for everything this flush writes."""
    for obj in session.new:
        if not isinstance(obj, AuditEvent):
            yield {"entity": obj.__tablename__, "entity_id": obj.id, "action": "create",
                   "before": None, "after": _snapshot(obj)}
    for obj in session.dirty:
        if isinstance(obj, AuditEvent) or not session.is_modified(obj, include_collections=False):
            continue
        before, after = _changes(obj, session.info.get("_audit_stored", {}).get(id(obj), {}))
        if after:
            yield {"entity": obj.__tablename__, "entity_id": obj.id,
                   "action": _action(before, after), "before": before, "after": after}
    for obj in session.deleted:
        if not isinstance(obj, AuditEvent):
            yield {"entity": obj.__tablename__, "entity_id": obj.id, "action": "delete",
                   "before": _snapshot(obj), "after": None}


def _last_hash(conn: sa.Connection) -> str:
    """The hash at the head of the chain, taking the chain lock where the database has one."""
    if conn.dialect.name == "postgresql":
        conn.execute(sa.text("SELECT pg_advisory_xact_lock(:k)"), {"k": WRITE_LOCK_KEY})
    table = AuditEvent.__table__
    last = conn.execute(sa.select(table.c.hash).order_by(table.c.id.desc()).limit(1)).scalar()
    return last or GENESIS_HASH


@event.listens_for(Session, "before_flush")
def _read_unloaded_old_values(session: Session, _flush_context: Any, _instances: Any) -> None:
    """Fetch the stored value of changed columns whose old value was never loaded (expired)."""
    stored = {}
    for obj in session.dirty:
        state = inspect(obj)
        if isinstance(obj, AuditEvent) or state.key is None:
            continue
        unknown = [a.key for a in state.mapper.column_attrs
                   if (h := state.attrs[a.key].history).added and not h.deleted]
        if unknown:
            table = state.mapper.local_table
            row = session.connection().execute(
                sa.select(*(table.c[k] for k in unknown)).where(table.c.id == obj.id)).one()
            stored[id(obj)] = dict(zip(unknown, row))
    session.info["_audit_stored"] = stored


@event.listens_for(Session, "after_flush")
def _write_audit_events(session: Session, _flush_context: Any) -> None:
    """Append one chained audit event for every row this flush creates, changes or deletes."""
    pending = list(_pending_events(session))
    if pending:
        append_events(session.connection(), pending, session.info.get("actor_id"),
                      session.info.get("audit_reason"))


def append_events(conn: sa.Connection, items: Iterable[dict[str, Any]], actor_id: int | None,
                  reason: str | None) -> None:
    """Chain and seal events (entity, entity_id, action, before, after) onto the trail."""
    prev = _last_hash(conn)
    for item in items:
        row = {**item, "at": utcnow(), "actor_id": actor_id, "reason": reason, "prev_hash": prev}
        row["hash"] = prev = event_hash(content(_Row(**row)))
        conn.execute(AuditEvent.__table__.insert().values(**row))


@dataclass
class _Row:
    """Attribute access over a dict, so the same content function serves rows and objects."""

    at: datetime
    actor_id: int | None
    entity: str
    entity_id: int | None
    action: str
    before: dict | None
    after: dict | None
    reason: str | None
    prev_hash: str
    hash: str = ""


def set_actor(session: Session, person_id: int | None) -> None:
    """Record who is acting for every change this session flushes."""
    session.info["actor_id"] = person_id


@contextmanager
def reason(session: Session, text: str | None) -> Iterator[None]:
    """Attach a reason to the audit events of the changes flushed inside the block."""
    previous = session.info.get("audit_reason")
    session.info["audit_reason"] = text
    try:
        yield
        session.flush()
    finally:
        session.info["audit_reason"] = previous
