"""pregnancy dates (estimated conception, expected end) and whether a set's fetal rule covers the whole pregnancy

Revision ID: 0008
Revises: 0007
"""
from alembic import op
import sqlalchemy as sa

from models.audit.verify_ops import record_baseline

revision = "0008"
down_revision = "0007"
branch_labels = None
depends_on = None


def upgrade():
    with op.batch_alter_table("pregnancy_declaration") as batch:
        batch.add_column(sa.Column("conception_on", sa.Date(), nullable=True))
        batch.add_column(sa.Column("expected_end_on", sa.Date(), nullable=True))
    with op.batch_alter_table("limit_set") as batch:
        batch.add_column(sa.Column("whole_pregnancy", sa.Boolean(), nullable=False,
                                   server_default=sa.false()))
    # The shipped 10 CFR 20 preset limits the dose "during the entire pregnancy" (20.1208(a)).
    op.execute("UPDATE limit_set SET whole_pregnancy = true WHERE preset_key = 'cfr10_20'")
    # 0007 and 0008 added columns and changed rows: the trail records them as found.
    record_baseline(op.get_bind(), "Recorded as found after limit sets and declarations gained their new fields.")


def downgrade():
    with op.batch_alter_table("limit_set") as batch:
        batch.drop_column("whole_pregnancy")
    with op.batch_alter_table("pregnancy_declaration") as batch:
        batch.drop_column("expected_end_on")
        batch.drop_column("conception_on")
