"""seal the audit trail with the audit key, record rows it did not describe, guard kept rows

Revision ID: 0012
Revises: 0006
Create Date: 2026-12-02 05:00:00

Every existing event is sealed again with HMAC-SHA256 under AUDIT_KEY (it was a plain SHA-256
chain), so the key must be the one the app will use from now on. Rows the trail did not describe
(the settings row made by the first migration, secrets recorded without a digest) get a baseline
event. Then triggers refuse UPDATE and DELETE on dose_record and audit_event.
"""
from alembic import op
import sqlalchemy as sa
from flask import current_app

from models.audit import guards
from models.audit.tables import AuditEvent
from models.audit.audit_ops import GENESIS_HASH, content, event_hash, use_key
from models.audit.verify_ops import record_baseline

# revision identifiers, used by Alembic.
revision = '0012'
down_revision = '0006'
branch_labels = None
depends_on = None


def _reseal(conn):
    """Recompute every event's chain link and seal in order, under the audit key."""
    table = AuditEvent.__table__
    rows = conn.execute(sa.select(table).order_by(table.c.id)).all()
    prev = GENESIS_HASH
    for row in rows:
        fields = {**content(row), "prev_hash": prev}
        sealed = event_hash(fields)
        conn.execute(table.update().where(table.c.id == row.id).values(prev_hash=prev, hash=sealed))
        prev = sealed


def upgrade():
    conn = op.get_bind()
    use_key(current_app.config["AUDIT_KEY"])
    _reseal(conn)
    record_baseline(conn, "Recorded as found when the audit trail began checking stored rows.")
    guards.run(conn, guards.create_statements(conn.dialect.name))


def downgrade():
    conn = op.get_bind()
    guards.run(conn, guards.drop_statements(conn.dialect.name))
