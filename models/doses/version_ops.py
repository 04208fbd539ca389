"""A person's dose history for their exposure page: monthly sums, the calendar year's running
total, the fetal window month by month, and the dose records with their versions.

Every sum goes through the engine (one person, one evaluation date per month end), so the chart
follows the same proration, MRD and lens policies as the table beside it.
"""
from __future__ import annotations

import sqlalchemy as sa
from sqlalchemy.orm import Session, aliased

from models.doses.tables import DoseRecord


def record_versions(session: Session, person_id: int) -> list[list[DoseRecord]]:
    """The person's records in force, newest wear period first, each followed by the versions it
    replaced (newest first)."""
    records = session.scalars(
        sa.select(DoseRecord).where(DoseRecord.person_id == person_id).order_by(DoseRecord.id)
    ).all()
    by_id = {r.id: r for r in records}
    replaced = {r.supersedes_id for r in records if r.supersedes_id is not None}
    chains = []
    for record in records:
        if record.id in replaced:
            continue
        chain = [record]
        # A version recorded against another person (a correction of the wearer) ends the chain.
        while chain[-1].supersedes_id in by_id:
            chain.append(by_id[chain[-1].supersedes_id])
        chains.append(chain)
    chains.sort(key=lambda c: (c[0].wear_start, c[0].wear_end, c[0].id), reverse=True)
    return chains




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
