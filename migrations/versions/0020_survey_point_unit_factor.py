"""keep the unit factor each survey point was converted with

Readings in mR/h now convert with the largest H*(10)/Ka up to the tube voltage, so the factor
differs between surveys; each point keeps the one it was stored at. Earlier points were stored at
1 (uSv/h) or 10 (mrem/h and mR/h).

Revision ID: 0020
Revises: 0016
"""
from alembic import op
import sqlalchemy as sa

from models.audit.verify_ops import record_baseline


revision = '0020'
down_revision = '0016'
branch_labels = None
depends_on = None


def upgrade():
    with op.batch_alter_table('survey_point', schema=None) as batch_op:
        batch_op.add_column(sa.Column('usv_h_per_unit', sa.Double(), nullable=True))
    op.execute("UPDATE survey_point SET usv_h_per_unit = CASE WHEN entered_unit = 'uSv/h' THEN 1.0 ELSE 10.0 END")
    with op.batch_alter_table('survey_point', schema=None) as batch_op:
        batch_op.alter_column('usv_h_per_unit', existing_type=sa.Double(), nullable=False)
    record_baseline(op.get_bind(), "Recorded as found after each survey point kept its unit factor.")


def downgrade():
    with op.batch_alter_table('survey_point', schema=None) as batch_op:
        batch_op.drop_column('usv_h_per_unit')
