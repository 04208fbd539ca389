"""index sessions by start, alone and per instrument, for lists paged by keyset

Revision ID: 0021
Revises: 0020
"""
from alembic import op

revision = "0021"
down_revision = "0020"
branch_labels = None
depends_on = None


def upgrade():
    op.create_index("ix_instrument_session_started_at_id", "instrument_session", ["started_at", "id"])
    op.create_index("ix_instrument_session_instrument_id_started_at", "instrument_session",
                    ["instrument_id", "started_at"])


def downgrade():
    op.drop_index("ix_instrument_session_instrument_id_started_at", table_name="instrument_session")
    op.drop_index("ix_instrument_session_started_at_id", table_name="instrument_session")
