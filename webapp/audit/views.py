"""Browse the audit trail, newest first, filtered by record type."""
from __future__ import annotations

import sqlalchemy as sa
from flask import render_template, request
from flask_login import current_user

from models.audit.tables import AuditEvent
from models.people.tables import Person, Role
from webapp.access import roles_required
from webapp.audit import bp
from webapp.extensions import db
from webapp.forms import query_int

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
    page = query_int("page", 1, high=1_000_000)
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
    return render_template("audit/index.html", events=events, actors=actors, entity=entity,
                           entities=shown, page=page, more=len(events) == PAGE_SIZE)
