"""Checking the audit trail: the sealed chain, the stored rows against it, and a kept anchor."""
from __future__ import annotations

import json
import re
from collections.abc import Iterator
from dataclasses import dataclass
from typing import Any

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.audit.audit_ops import (
    BULK_CREATE,
    GENESIS_HASH,
    RowsDigest,
    append_events,
    content,
    event_hash,
    row_snapshot,
)
from models.audit.tables import AuditEvent

# An event that records a row's whole state as found, where the trail had not recorded it.
BASELINE = "baseline"
_ANCHOR = re.compile(r"audit-anchor count=(\d+) last=(\d+) hash=([0-9a-f]{64})")


@dataclass(frozen=True)
class ChainProblem:
    """The first place where the audit trail does not hold."""

    event_id: int | None
    message: str


@dataclass(frozen=True)
class Anchor:
    """The head of the chain at one moment: how many events, the newest one and its hash."""

    count: int
    last_id: int
    hash: str

    def line(self) -> str:
        """The anchor as one line of text, to keep somewhere the database's users cannot write."""
        return f"audit-anchor count={self.count} last={self.last_id} hash={self.hash}"

    @classmethod
    def parse(cls, text: str) -> Anchor | None:
        """Read an anchor line back; None when the text holds none."""
        found = _ANCHOR.search(text)
        return cls(int(found[1]), int(found[2]), found[3]) if found else None


def verify_chain(session: Session, key: bytes | None = None) -> ChainProblem | None:
    """Walk the chain in order; report the first altered, forged or removed event."""
    prev = GENESIS_HASH
    previous_id = None
    rows = session.execute(sa.select(AuditEvent.__table__).order_by(AuditEvent.id))
    for row in rows:
        if row.prev_hash != prev:
            after = f"after event {previous_id}" if previous_id else "at the start"
            return ChainProblem(row.id, f"event {row.id}: an event {after} was removed or reordered")
        if event_hash(content(row), key) != row.hash:
            return ChainProblem(row.id, f"event {row.id}: its content was altered or its seal forged")
        prev, previous_id = row.hash, row.id
    return None


def chain_head(session: Session) -> Anchor:
    """The anchor of the trail as it stands now."""
    table = AuditEvent.__table__
    count, last_id = session.execute(sa.select(sa.func.count(), sa.func.max(table.c.id))).one()
    last_hash = session.scalar(sa.select(table.c.hash).where(table.c.id == last_id)) if last_id else None
    return Anchor(count, last_id or 0, last_hash or GENESIS_HASH)


def verify_anchor(session: Session, anchor: Anchor) -> ChainProblem | None:
    """The event an earlier anchor named must still be there, with its hash and everything before it."""
    table = AuditEvent.__table__
    kept = session.scalar(sa.select(table.c.hash).where(table.c.id == anchor.last_id))
    if anchor.count and kept is None:
        return ChainProblem(anchor.last_id, f"event {anchor.last_id}, the head when the anchor was "
                                            "taken, is gone: the newest events were removed")
    if anchor.count and kept != anchor.hash:
        return ChainProblem(anchor.last_id, f"event {anchor.last_id} differs from the anchor: the "
                                            "trail was cut and rewritten from there")
    before = session.scalar(sa.select(sa.func.count()).where(table.c.id <= anchor.last_id))
    if before != anchor.count:
        return ChainProblem(anchor.last_id, f"the anchor counted {anchor.count} events up to event "
                                            f"{anchor.last_id}; {before} are there")
    return None


def audited_rows(session: Session) -> Iterator[tuple[sa.Table, Iterator[Any]]]:
    """Each table the trail records with its stored rows, by id.

    That is every table with an id: not the trail itself, nor link tables without an id of their
    own (who was involved in an incident), whose changes no event names, nor a table declaring
    `info={"audit_rows": False}` (working state written outside the ORM, such as a mail queue).
    Only the columns the database has so far are read, so a migration can run this mid-upgrade.
    """
    inspector = sa.inspect(session.connection())
    present = set(inspector.get_table_names())
    for table in AuditEvent.metadata.sorted_tables:
        if (table.name == AuditEvent.__tablename__ or table.name not in present or "id" not in table.c
                or table.info.get("audit_rows") is False):
            continue
        names = {c["name"] for c in inspector.get_columns(table.name)}
        columns = [c for c in table.columns if c.name in names]
        yield table, session.execute(sa.select(*columns).order_by(table.c.id))


def recorded_states(session: Session) -> dict[tuple[str, int], dict[str, Any] | None]:
    """Each row's state as its events describe it (None once deleted), replayed in order."""
    table = AuditEvent.__table__
    states: dict[tuple[str, int], dict[str, Any] | None] = {}
    query = (sa.select(table.c.entity, table.c.entity_id, table.c.action, table.c.after)
             .order_by(table.c.id))
    for entity, entity_id, action, after in session.execute(query):
        key = (entity, entity_id)
        if action == BULK_CREATE:
            continue
        if action == "delete":
            states[key] = None
        elif action in ("create", BASELINE) or states.get(key) is None:
            states[key] = dict(after or {})
        else:
            states[key] = {**states[key], **(after or {})}
    return states


def bulk_groups(session: Session) -> dict[str, dict[tuple[str, Any], dict[str, Any]]]:
    """Bulk events by table: (group column, group id) -> what the event recorded."""
    table = AuditEvent.__table__
    groups: dict[str, dict[tuple[str, Any], dict[str, Any]]] = {}
    query = sa.select(table.c.entity, table.c.after).where(table.c.action == BULK_CREATE).order_by(table.c.id)
    for entity, after in session.execute(query):
        groups.setdefault(entity, {})[(after["group_column"], after["group_id"])] = after
    return groups


def _group_of(groups: dict[tuple[str, Any], dict[str, Any]], row: Any) -> tuple[str, Any] | None:
    """The bulk group a stored row belongs to, if any."""
    values = row._mapping
    return next((key for key in groups if values.get(key[0]) == key[1]), None) if groups else None


def _bulk_problems(table_name: str, groups: dict, digests: dict[tuple[str, Any], RowsDigest]) -> list[str]:
    """Groups whose stored rows no longer match their bulk event's count and digest."""
    problems = []
    for key, after in groups.items():
        digest = digests.get(key) or RowsDigest(after["columns"])
        if digest.count != after["rows"] or digest.hexdigest() != after["rows_sha256"]:
            problems.append(f"{table_name} rows with {key[0]} = {key[1]}: {digest.count} rows stored, "
                            f"{after['rows']} recorded; they differ from the bulk audit event")
    return problems


def _plain_json(value: Any) -> Any:
    """A value as it comes back from the trail's JSON."""
    return json.loads(json.dumps(value, default=str))


def _differs(recorded: dict[str, Any], row: dict[str, Any]) -> list[str]:
    """Columns whose stored value differs from the recorded one.

    Only recorded columns are compared: a column added by a later upgrade is checked from the first
    event (or baseline) that records it.
    """
    stored = _plain_json(row)
    return sorted(k for k, v in recorded.items() if k in stored and stored[k] != v)


def row_problems(session: Session, limit: int = 20) -> list[str]:
    """Rows changed, added or removed behind the trail's back (first `limit` of them)."""
    states = recorded_states(session)
    bulk = bulk_groups(session)
    problems: list[str] = []
    for table, rows in audited_rows(session):
        seen = set()
        groups = bulk.get(table.name, {})
        digests: dict[tuple[str, Any], RowsDigest] = {}
        for row in rows:
            seen.add(row.id)
            recorded = states.get((table.name, row.id))
            if recorded is None and (group := _group_of(groups, row)) is not None:
                # Written by one statement: checked as a whole against its bulk event below.
                digests.setdefault(group, RowsDigest(groups[group]["columns"])).add(row._mapping)
            elif recorded is None:
                problems.append(f"{table.name} {row.id}: no audit event records this row")
            elif columns := _differs(recorded, row_snapshot(row)):
                problems.append(f"{table.name} {row.id}: {', '.join(columns)} differ from the "
                                "latest audit event")
        problems += _bulk_problems(table.name, groups, digests)
        problems += [f"{entity} {entity_id}: removed without an audit event"
                     for (entity, entity_id), state in states.items()
                     if entity == table.name and state is not None and entity_id not in seen]
        if len(problems) >= limit:
            break
    return problems[:limit]


def record_baseline(conn: sa.Connection, reason: str) -> int:
    """Append a baseline event for each row the trail does not describe; return how many.

    For upgrades and set-up only (rows written before the trail checked them, or by a migration).
    """
    session = Session(bind=conn)
    states = recorded_states(session)
    bulk = bulk_groups(session)
    items = []
    for table, rows in audited_rows(session):
        groups = bulk.get(table.name, {})
        for row in rows:
            snapshot = row_snapshot(row)
            recorded = states.get((table.name, row.id))
            if recorded is None and _group_of(groups, row) is not None:
                continue  # its bulk event stands for it; a mismatch stays for verify to show
            if recorded is None or _differs(recorded, snapshot) or set(snapshot) - set(recorded):
                items.append({"entity": table.name, "entity_id": row.id, "action": BASELINE,
                              "before": recorded, "after": _plain_json(snapshot)})
    append_events(conn, items, None, reason)
    return len(items)
