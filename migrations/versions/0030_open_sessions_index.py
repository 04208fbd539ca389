"""partial indexes over the sessions not ended yet, for open sessions and busy instruments

Revision ID: 0030
Revises: 0021
"""
import sqlalchemy as sa
from alembic import op

revision = "0030"
down_revision = "0021"
branch_labels = None
depends_on = None


COLUMNS = ("instrument_id", "operator_id")


def upgrade():
    for column in COLUMNS:
        op.create_index(f"ix_instrument_session_open_{column}", "instrument_session", [column],
                        sqlite_where=sa.text("ended_at IS NULL"), postgresql_where=sa.text("ended_at IS NULL"))


def downgrade():
    for column in COLUMNS:
        op.drop_index(f"ix_instrument_session_open_{column}", table_name="instrument_session")
