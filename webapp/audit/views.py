"""Browse the audit trail, newest first, filtered by record type, person and date."""
from __future__ import annotations

from datetime import timedelta
from types import SimpleNamespace

import sqlalchemy as sa
from flask import render_template, request
from flask_login import current_user

from models.audit.list_ops import EventFilter, event_page
from models.audit.tables import AuditEvent
from models.people.tables import Person, Role
from models.reports.export_ops import DOSE_ENTITIES
from models.surveys.survey_ops import SURVEY_ASKED
from webapp.access import roles_required
from webapp.audit import bp
from webapp.extensions import db
from webapp.formatting import day_start
from webapp.forms import query_int


@bp.route("/audit/")
@roles_required(Role.SAFETY_OFFICER, Role.ADMIN)
def index():
    """A page of audit events; an admin without the safety officer role sees no dose content."""
    officer = current_user.has_role(Role.SAFETY_OFFICER)
    entity = request.args.get("entity", "")
    actor = db.session.get(Person, query_int("person", 0))
    until = day_start(request.args.get("to"))
    chosen = EventFilter(entity or None, actor.id if actor else None, day_start(request.args.get("from")),
                         until + timedelta(days=1) if until else None,
                         frozenset() if officer else DOSE_ENTITIES)
    before = query_int("before")
    events, next_before = event_page(db.session, chosen, before)
    actors = {p.id: p for p in db.session.scalars(
        sa.select(Person).where(Person.id.in_({e.actor_id for e in events if e.actor_id})))}
    entities = db.session.scalars(sa.select(AuditEvent.entity).distinct().order_by(AuditEvent.entity))
    shown = [e for e in entities if officer or e not in DOSE_ENTITIES]
    if not officer:
        events = [_without_dose_reasons(e) for e in events]
    args = {k: v for k, v in request.args.items() if k != "before"}
    return render_template("audit/index.html", events=events, actors=actors, entity=entity,
                           entities=shown, people=db.session.scalars(sa.select(Person).order_by(Person.name)),
                           actor=actor, args=args, next_before=next_before, first_page=before is None)


def _without_dose_reasons(event: AuditEvent) -> AuditEvent | SimpleNamespace:
    """A survey asked for after a dose rise, as the admin sees it: who asked, not whose dose or why.

    Older trails wrote the level reached into the task's reason.
    """
    if event.entity != "survey_task" or (event.after or event.before or {}).get("trigger") != "dose_rise":
        return event
    return SimpleNamespace(**{c: getattr(event, c) for c in ("id", "at", "actor_id", "action", "entity",
                                                             "entity_id", "reason")},
                           before=_neutral(event.before), after=_neutral(event.after))


def _neutral(state: dict | None) -> dict | None:
    """A survey task's recorded state with its reason replaced by who asked."""
    return state and {**state, **({"reason": SURVEY_ASKED} if "reason" in state else {})}
