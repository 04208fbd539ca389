"""The home panel no other area covers: the admin's overview of people and instruments."""
from __future__ import annotations

import sqlalchemy as sa

from models.instruments.instrument_ops import active_instruments
from models.people.tables import ROLE_LABELS, Person, PersonRole, Role
from webapp.extensions import db
from webapp.slots import home_panels


@home_panels.add("home/_admin_overview.html", {Role.ADMIN}, order=80)
def admin_overview(_person: Person) -> dict:
    """Active people by role, and instruments in and out of service."""
    counts = dict(db.session.execute(
        sa.select(PersonRole.role, sa.func.count())
        .join(Person, Person.id == PersonRole.person_id)
        .where(Person.active.is_(True)).group_by(PersonRole.role)).all())
    active_people = db.session.scalar(
        sa.select(sa.func.count()).select_from(Person).where(Person.active.is_(True)))
    instruments = active_instruments(db.session)
    return {"roles": [(label, counts.get(role, 0)) for role, label in ROLE_LABELS.items()],
            "active_people": active_people,
            "in_service": sum(i.in_service for i in instruments),
            "out_of_service": [i for i in instruments if not i.in_service]}
