"""sessions on one instrument never overlap (PostgreSQL exclusion constraint)

Two instrument PCs posting the same slot at once both passed the overlap check before either
inserted. On PostgreSQL the database itself now refuses the second row: an exclusion constraint over
the instrument and the session's time range (an open session's range has no upper bound). SQLite
has no such constraint; there session writes are serialised with BEGIN IMMEDIATE instead
(models.core.database.hold_write_lock).

Revision ID: 0015
Revises: 0013
"""
from alembic import op
import sqlalchemy as sa


revision = '0015'
down_revision = '0013'
branch_labels = None
depends_on = None

NAME = 'ex_instrument_session_no_overlap'

# Two sessions of one instrument that share time; the same test the constraint applies.
CLASHES = """
SELECT a.id, b.id FROM instrument_session a JOIN instrument_session b
  ON a.instrument_id = b.instrument_id AND a.id < b.id
 AND tsrange(a.started_at, a.ended_at, '[)') && tsrange(b.started_at, b.ended_at, '[)')
ORDER BY a.id, b.id LIMIT 20
"""


def upgrade():
    if op.get_bind().dialect.name != 'postgresql':
        return
    clashes = op.get_bind().execute(sa.text(CLASHES)).all()
    if clashes:
        pairs = ', '.join(f'{a} and {b}' for a, b in clashes)
        raise RuntimeError(
            'Sessions that overlap on one instrument were recorded before this check existed '
            f'(session ids {pairs}). Nothing was changed; ask the radiation safety officer '
            'which entry is right, record the correction, then run the upgrade again.')
    # btree_gist lets one GiST index compare the instrument id with '=' beside the time range.
    op.execute('CREATE EXTENSION IF NOT EXISTS btree_gist')
    op.execute(
        f'ALTER TABLE instrument_session ADD CONSTRAINT {NAME} EXCLUDE USING gist '
        "(instrument_id WITH =, tsrange(started_at, ended_at, '[)') WITH &&)")


def downgrade():
    if op.get_bind().dialect.name != 'postgresql':
        return
    op.execute(f'ALTER TABLE instrument_session DROP CONSTRAINT {NAME}')
