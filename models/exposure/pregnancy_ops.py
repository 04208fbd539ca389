"""Pregnancy declarations: declared by the person (or the safety officer for them), withdrawn, ended.

A declaration is private to the person and the safety officer; nothing here decides who sees it,
the pages do. The fetal dose window runs from `declared_on` to `ended_on` (or to the evaluation
date while it is open).
"""
from __future__ import annotations

from datetime import date

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.core.errors import Invalid
from models.exposure.tables import PregnancyDeclaration

WITHDRAWN = "withdrawn"
ENDED = "ended"
END_REASONS = {WITHDRAWN: "withdrawn by the person", ENDED: "pregnancy ended"}


def declarations_of(session: Session, person_id: int) -> list[PregnancyDeclaration]:
    """A person's declarations, the latest first."""
    return list(session.scalars(
        sa.select(PregnancyDeclaration).where(PregnancyDeclaration.person_id == person_id)
        .order_by(PregnancyDeclaration.declared_on.desc(), PregnancyDeclaration.id.desc())))


def open_declaration(session: Session, person_id: int) -> PregnancyDeclaration | None:
    """The person's declaration still in force, if any."""
    return session.scalar(sa.select(PregnancyDeclaration).where(
        PregnancyDeclaration.person_id == person_id, PregnancyDeclaration.ended_on.is_(None)))


def open_declarations(session: Session) -> list[PregnancyDeclaration]:
    """Every declaration in force, the earliest first: the safety officer's list."""
    return list(session.scalars(
        sa.select(PregnancyDeclaration).where(PregnancyDeclaration.ended_on.is_(None))
        .order_by(PregnancyDeclaration.declared_on)))


def declare(session: Session, person_id: int, declared_on: date | None, *, today: date,
            recorded_by_id: int | None = None) -> PregnancyDeclaration:
    """Record a declaration from its date; a person has at most one in force."""
    if declared_on is None:
        raise Invalid.one("declared_on", "Enter the date of the declaration.")
    if declared_on > today:
        raise Invalid.one("declared_on", f"The declaration date {declared_on} is in the future.")
    if open_declaration(session, person_id) is not None:
        raise Invalid.one("declared_on", "A declaration is already in force.")
    earlier = declarations_of(session, person_id)
    if earlier and earlier[0].ended_on and declared_on < earlier[0].ended_on:
        raise Invalid.one("declared_on", f"The date falls inside an earlier declaration, which ended on "
                                         f"{earlier[0].ended_on}.")
    declaration = PregnancyDeclaration(person_id=person_id, declared_on=declared_on,
                                       recorded_by_id=recorded_by_id)
    session.add(declaration)
    session.flush()
    return declaration


def end_declaration(session: Session, declaration: PregnancyDeclaration, ended_on: date | None,
                    reason: str, *, today: date) -> PregnancyDeclaration:
    """Close a declaration: withdrawn by the person, or ended (the safety officer records it)."""
    if reason not in END_REASONS:
        raise ValueError(f"unknown end reason {reason!r}")
    if declaration.ended_on is not None:
        raise Invalid.one("ended_on", f"This declaration already ended on {declaration.ended_on}.")
    if ended_on is None:
        raise Invalid.one("ended_on", "Enter the date.")
    if ended_on > today:
        raise Invalid.one("ended_on", f"{ended_on} is in the future.")
    if ended_on < declaration.declared_on:
        raise Invalid.one("ended_on", f"{ended_on} is before the declaration date "
                                      f"{declaration.declared_on}.")
    declaration.ended_on = ended_on
    declaration.end_reason = reason
    session.flush()
    return declaration
