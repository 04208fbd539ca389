"""Pregnancy declarations: declared by the person (or the safety officer for them), withdrawn, ended.

A declaration is private to the person and the safety officer; nothing here decides who sees it,
the pages do. The fetal dose window runs from `declared_on` (or, where the limit set covers the
whole pregnancy, from the estimated conception) to `ended_on`, else to the expected end (so the
projection runs to it), else to the evaluation date.
"""
from __future__ import annotations

from datetime import date, timedelta

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


# A pregnancy lasts about 280 days from the last period (obstetric common practice, from memory);
# 300 days leaves room for an estimate's error without accepting impossible dates.
LONGEST_PREGNANCY_DAYS = 300
EARLIEST_YEAR = 1950


def _check_dates(declared_on: date, conception_on: date | None, expected_end_on: date | None) -> None:
    """The optional dates must fit the declaration; the field is named in the error."""
    errors = {}
    longest = timedelta(days=LONGEST_PREGNANCY_DAYS)
    if conception_on is not None and not declared_on - longest <= conception_on <= declared_on:
        errors["conception_on"] = (f"The estimated conception must be on or before the declaration "
                                   f"({declared_on}) and at most {LONGEST_PREGNANCY_DAYS} days before it.")
    if expected_end_on is not None:
        earliest = conception_on or declared_on
        if not declared_on <= expected_end_on <= earliest + longest:
            errors["expected_end_on"] = (f"The expected end must fall between the declaration "
                                         f"({declared_on}) and {LONGEST_PREGNANCY_DAYS} days after "
                                         f"{'the conception' if conception_on else 'it'}.")
    if errors:
        raise Invalid(errors)


def declare(session: Session, person_id: int, declared_on: date | None, *, today: date,
            recorded_by_id: int | None = None, conception_on: date | None = None,
            expected_end_on: date | None = None) -> PregnancyDeclaration:
    """Record a declaration from its date (with the estimated conception and the expected end, if
    known); a person has at most one in force."""
    if declared_on is None:
        raise Invalid.one("declared_on", "Enter the date of the declaration.")
    if declared_on > today:
        raise Invalid.one("declared_on", f"The declaration date {declared_on} is in the future.")
    if declared_on.year < EARLIEST_YEAR:
        raise Invalid.one("declared_on", f"Enter a date from {EARLIEST_YEAR} on.")
    _check_dates(declared_on, conception_on, expected_end_on)
    if open_declaration(session, person_id) is not None:
        raise Invalid.one("declared_on", "A declaration is already in force.")
    earlier = declarations_of(session, person_id)
    if earlier and earlier[0].ended_on and declared_on < earlier[0].ended_on:
        raise Invalid.one("declared_on", f"The date falls inside an earlier declaration, which ended on "
                                         f"{earlier[0].ended_on}.")
    declaration = PregnancyDeclaration(person_id=person_id, declared_on=declared_on,
                                       conception_on=conception_on, expected_end_on=expected_end_on,
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
