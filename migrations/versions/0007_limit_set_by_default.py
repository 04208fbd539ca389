"""lab_settings.limit_set_by_default: the set in force was installed by default, not yet confirmed

Revision ID: 0007
Revises: 0010
"""
from alembic import op
import sqlalchemy as sa

revision = "0007"
down_revision = "0010"
branch_labels = None
depends_on = None


def upgrade():
    with op.batch_alter_table("lab_settings") as batch:
        batch.add_column(sa.Column("limit_set_by_default", sa.Boolean(), nullable=False,
                                   server_default=sa.false()))


def downgrade():
    with op.batch_alter_table("lab_settings") as batch:
        batch.drop_column("limit_set_by_default")
