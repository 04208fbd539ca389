"""exposure_figures: each person's evaluation for the current date, shared by every server process;
a partial index over the dose results still awaited (read by every safety officer's page)

Revision ID: 0032
Revises: 0033
"""
import sqlalchemy as sa
from alembic import op

# Written out, not imported: a migration stays as it was when the model changes.
UNRETURNED = "result IN ('lost', 'not_returned')"

revision = "0032"
down_revision = "0033"
branch_labels = None
depends_on = None


def upgrade():
    # Starts empty: the first reader (or `flask exposure refresh`) evaluates everyone and fills it.
    op.create_table(
        "exposure_figures",
        sa.Column("person_id", sa.Integer(), autoincrement=False, nullable=False),
        sa.Column("evaluated_on", sa.Date(), nullable=False),
        sa.Column("rules", sa.String(length=64), nullable=False),
        sa.Column("figures", sa.LargeBinary(), nullable=False),
        sa.ForeignKeyConstraint(["person_id"], ["person.id"], name=op.f("fk_exposure_figures_person_id_person")),
        sa.PrimaryKeyConstraint("person_id", name=op.f("pk_exposure_figures")),
    )
    op.create_index("ix_dose_record_unreturned", "dose_record", ["id"], sqlite_where=sa.text(UNRETURNED),
                    postgresql_where=sa.text(UNRETURNED))


def downgrade():
    op.drop_index("ix_dose_record_unreturned", table_name="dose_record")
    op.drop_table("exposure_figures")
