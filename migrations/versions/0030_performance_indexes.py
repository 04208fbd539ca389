"""partial indexes over the sessions not ended yet (open sessions, busy instruments); dose records by person and wear start (imports)

Revision ID: 0030
Revises: 0008
"""
import sqlalchemy as sa
from alembic import op

revision = "0030"
down_revision = "0008"
branch_labels = None
depends_on = None


COLUMNS = ("instrument_id", "operator_id")


def upgrade():
    for column in COLUMNS:
        op.create_index(f"ix_instrument_session_open_{column}", "instrument_session", [column],
                        sqlite_where=sa.text("ended_at IS NULL"), postgresql_where=sa.text("ended_at IS NULL"))
    op.create_index("ix_dose_record_person_id_wear_start", "dose_record", ["person_id", "wear_start"])


def downgrade():
    op.drop_index("ix_dose_record_person_id_wear_start", table_name="dose_record")
    for column in COLUMNS:
        op.drop_index(f"ix_instrument_session_open_{column}", table_name="instrument_session")
