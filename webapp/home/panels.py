"""Home panels no other area covers: the admin's overview and the operator's instruments."""
from __future__ import annotations

import sqlalchemy as sa

from models.core.due_dates import DUE_SOON, OVERDUE, due_state
from models.instruments.instrument_ops import active_instruments
from models.instruments.tables import Authorisation, Instrument
from models.people.tables import ROLE_LABELS, Person, PersonRole, Role
from webapp.extensions import db
from webapp.formatting import lab_today, settings
from webapp.slots import home_panels

# Refresher states worth a badge; an authorisation in good standing shows only its date.
REFRESHER_BADGES = {DUE_SOON: ("state-warn", "due soon"), OVERDUE: ("state-bad", "overdue")}


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


@home_panels.add("home/_my_instruments.html", {Role.OPERATOR}, order=20)
def my_instruments(person: Person) -> dict:
    """The instruments the person is authorised on, with status and refresher due date."""
    today, soon = lab_today(), settings().due_soon_days
    rows = db.session.execute(
        sa.select(Authorisation, Instrument)
        .join(Instrument, Instrument.id == Authorisation.instrument_id)
        .where(Authorisation.person_id == person.id, Authorisation.revoked_at.is_(None),
               Instrument.retired_at.is_(None))
        .order_by(Instrument.name)).all()
    return {"rows": [(auth, instrument,
                      REFRESHER_BADGES.get(due_state(auth.refresher_due, today, soon)))
                     for auth, instrument in rows]}
