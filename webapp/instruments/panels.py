"""What this area adds to shared pages: the operator's instruments on the home page."""
from __future__ import annotations

import sqlalchemy as sa

from models.core.due_dates import DUE_SOON, OVERDUE, due_state
from models.instruments.tables import Authorisation, Instrument
from models.people.tables import Person, Role
from webapp.extensions import db
from webapp.formatting import lab_today, settings
from webapp.slots import home_panels

# Refresher states worth a badge; an authorisation in good standing shows only its date.
REFRESHER_BADGES = {DUE_SOON: ("state-warn", "due soon"), OVERDUE: ("state-bad", "overdue")}


@home_panels.add("instruments/_home.html", {Role.OPERATOR}, order=20)
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
