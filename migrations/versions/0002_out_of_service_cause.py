"""instrument.out_of_service_cause: tell a hold set by a failed check from a person's decision

Revision ID: 0002
Revises: 0001
"""
from alembic import op
import sqlalchemy as sa

revision = "0002"
down_revision = "0001"
branch_labels = None
depends_on = None


def upgrade():
    with op.batch_alter_table("instrument") as batch:
        batch.add_column(sa.Column("out_of_service_cause", sa.String(length=32), nullable=True))


def downgrade():
    with op.batch_alter_table("instrument") as batch:
        batch.drop_column("out_of_service_cause")
