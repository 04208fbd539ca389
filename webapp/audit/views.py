"""Browse the audit trail, newest first, filtered by record type."""
from __future__ import annotations

from types import SimpleNamespace

import sqlalchemy as sa
from flask import render_template, request
from flask_login import current_user

from models.audit.tables import AuditEvent
from models.people.tables import Person, Role
from models.surveys.survey_ops import SURVEY_ASKED
from webapp.access import roles_required
from webapp.audit import bp
from webapp.extensions import db

PAGE_SIZE = 100
# Dose and pregnancy details stay with the safety officer, even in the trail; dosimeters too,
# since an abdomen dosimeter issued to someone hints at a pregnancy.
DOSE_ENTITIES = frozenset({"dose_record", "pregnancy_declaration", "investigation", "dosimeter",
                           "import_batch"})


@bp.route("/audit/")
@roles_required(Role.SAFETY_OFFICER, Role.ADMIN)
def index():
    """A page of audit events; an admin without the safety officer role sees no dose content."""
    entity = request.args.get("entity", "")
    page = max(request.args.get("page", 1, type=int), 1)
    query = sa.select(AuditEvent).order_by(AuditEvent.id.desc())
    if entity:
        query = query.where(AuditEvent.entity == entity)
    if not current_user.has_role(Role.SAFETY_OFFICER):
        query = query.where(AuditEvent.entity.not_in(DOSE_ENTITIES))
    events = db.session.scalars(query.limit(PAGE_SIZE).offset((page - 1) * PAGE_SIZE)).all()
    actors = {p.id: p for p in db.session.scalars(
        sa.select(Person).where(Person.id.in_({e.actor_id for e in events if e.actor_id})))}
    entities = db.session.scalars(sa.select(AuditEvent.entity).distinct().order_by(AuditEvent.entity))
    shown = [e for e in entities if current_user.has_role(Role.SAFETY_OFFICER) or e not in DOSE_ENTITIES]
    if not current_user.has_role(Role.SAFETY_OFFICER):
        events = [_without_dose_reasons(e) for e in events]
    return render_template("audit/index.html", events=events, actors=actors, entity=entity,
                           entities=shown, page=page, more=len(events) == PAGE_SIZE)


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
