"""instruments are commissioned: a new one waits for a passing check and survey; existing ones stay
in service, commissioned when they were added

Revision ID: 0019
Revises: 0018
"""
from alembic import op
import sqlalchemy as sa

from models.audit.verify_ops import record_baseline

revision = "0019"
down_revision = "0018"
branch_labels = None
depends_on = None


def upgrade():
    with op.batch_alter_table("instrument") as batch:
        batch.add_column(sa.Column("commissioned_at", sa.DateTime(), nullable=True))
        batch.add_column(sa.Column("commissioning_check_at", sa.DateTime(),
                                   nullable=True))
        batch.add_column(sa.Column("commissioning_survey_at", sa.DateTime(),
                                   nullable=True))
    # Instruments already in the logbook were in use before commissioning was recorded.
    op.execute("UPDATE instrument SET commissioned_at = created_at")
    # 0017 to 0019 changed rows and added columns: the trail records them as found.
    record_baseline(op.get_bind(), "Recorded as found after migrations 0017 to 0019.")


def downgrade():
    with op.batch_alter_table("instrument") as batch:
        batch.drop_column("commissioning_survey_at")
        batch.drop_column("commissioning_check_at")
        batch.drop_column("commissioned_at")
