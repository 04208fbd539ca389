"""several dosimeters per session (whole body, rings): a link table replaces the single column

Revision ID: 0018
Revises: 0017
"""
from alembic import op
import sqlalchemy as sa

revision = "0018"
down_revision = "0017"
branch_labels = None
depends_on = None


def upgrade():
    op.create_table(
        "session_dosimeter",
        sa.Column("session_id", sa.Integer(), nullable=False),
        sa.Column("dosimeter_id", sa.Integer(), nullable=False),
        sa.ForeignKeyConstraint(["dosimeter_id"], ["dosimeter.id"],
                                name=op.f("fk_session_dosimeter_dosimeter_id_dosimeter")),
        sa.ForeignKeyConstraint(["session_id"], ["instrument_session.id"],
                                name=op.f("fk_session_dosimeter_session_id_instrument_session")),
        sa.PrimaryKeyConstraint("session_id", "dosimeter_id", name=op.f("pk_session_dosimeter")),
    )
    op.create_index(op.f("ix_session_dosimeter_dosimeter_id"), "session_dosimeter",
                    ["dosimeter_id"], unique=False)
    op.execute("INSERT INTO session_dosimeter (session_id, dosimeter_id) "
               "SELECT id, dosimeter_id FROM instrument_session WHERE dosimeter_id IS NOT NULL")
    with op.batch_alter_table("instrument_session") as batch:
        batch.drop_constraint("fk_instrument_session_dosimeter_id_dosimeter", type_="foreignkey")
        batch.drop_column("dosimeter_id")


def downgrade():
    with op.batch_alter_table("instrument_session") as batch:
        batch.add_column(sa.Column("dosimeter_id", sa.Integer(), nullable=True))
        batch.create_foreign_key("fk_instrument_session_dosimeter_id_dosimeter", "dosimeter",
                                 ["dosimeter_id"], ["id"])
    # One column holds one dosimeter: the lowest id of each session's set survives.
    op.execute("UPDATE instrument_session SET dosimeter_id = (SELECT MIN(dosimeter_id) "
               "FROM session_dosimeter WHERE session_id = instrument_session.id)")
    op.drop_index(op.f("ix_session_dosimeter_dosimeter_id"), table_name="session_dosimeter")
    op.drop_table("session_dosimeter")
