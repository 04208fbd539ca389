"""Figures of one calendar year across the lab."""
from __future__ import annotations

from datetime import date

import sqlalchemy as sa
from sqlalchemy.orm import Session

from models.doses.tables import DoseRecord
from models.people.tables import Person


def people_monitored(session: Session, year: int) -> list[Person]:
    """Everyone with a dose record worn during the year, by name."""
    worn = sa.select(DoseRecord.person_id).where(
        DoseRecord.wear_start <= date(year, 12, 31), DoseRecord.wear_end >= date(year, 1, 1))
    return list(session.scalars(sa.select(Person).where(Person.id.in_(worn)).order_by(Person.name)))
