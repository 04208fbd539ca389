"""Versions of dose records: which one is current, and each record's chain of corrections.

A record is current when no later version supersedes it; summaries count only current records.
"""
from __future__ import annotations

import sqlalchemy as sa
from sqlalchemy.orm import Session, aliased

from models.dosimetry import DoseRecord


def _successor():
    """An alias of dose_record standing for a record that supersedes another."""
    return aliased(DoseRecord, name="successor")


def is_current():
    """SQL condition: the dose record is not superseded by a later version."""
    newer = _successor()
    return ~sa.exists().where(newer.supersedes_id == DoseRecord.id)


def current_records_query() -> sa.Select:
    """SELECT of the current dose records (one per correction chain), to refine further."""
    return sa.select(DoseRecord).where(is_current())


def current_dose_records(session: Session, *, person_id: int | None = None) -> list[DoseRecord]:
    """The current dose records, of one person or everyone, oldest wear period first."""
    query = current_records_query().order_by(DoseRecord.wear_start, DoseRecord.id)
    if person_id is not None:
        query = query.where(DoseRecord.person_id == person_id)
    return list(session.scalars(query))


def successor_of(session: Session, record: DoseRecord) -> DoseRecord | None:
    """The version that supersedes this record, if any."""
    return session.scalar(sa.select(DoseRecord).where(DoseRecord.supersedes_id == record.id))


def history(session: Session, record: DoseRecord) -> list[DoseRecord]:
    """Every version of a record's chain, the original first."""
    chain = [record]
    while chain[0].supersedes is not None:
        chain.insert(0, chain[0].supersedes)
    while (newer := successor_of(session, chain[-1])) is not None:
        chain.append(newer)
    return chain


def chains(records: list[DoseRecord]) -> list[list[DoseRecord]]:
    """Group records into their correction chains (original first), latest wear period first."""
    by_id = {r.id: r for r in records}
    after = {r.supersedes_id: r for r in records if r.supersedes_id in by_id}
    grouped = []
    for root in (r for r in records if r.supersedes_id not in by_id):
        chain = [root]
        while chain[-1].id in after:
            chain.append(after[chain[-1].id])
        grouped.append(chain)
    return sorted(grouped, key=lambda c: (c[-1].wear_start, c[-1].id), reverse=True)
