"""import staging: checked rows of an import wait outside the write lock and are published in one short step

Revision ID: 0033
Revises: 0031
"""
import sqlalchemy as sa
from alembic import op

revision = "0033"
down_revision = "0031"
branch_labels = None
depends_on = None


def _enum(*values, name):
    """An enum column without its CHECK (dose_record checks the values as they are published)."""
    return sa.Enum(*values, name=name, native_enum=False, create_constraint=False, length=32)


def upgrade():
    op.create_table(
        "import_staging",
        sa.Column("run", sa.String(length=32), nullable=False),
        sa.Column("staged_at", sa.DateTime(), nullable=False),
        sa.Column("line", sa.Integer(), nullable=False),
        sa.Column("person_id", sa.Integer(), nullable=False),
        sa.Column("dosimeter_id", sa.Integer(), nullable=True),
        sa.Column("wear_start", sa.Date(), nullable=False),
        sa.Column("wear_end", sa.Date(), nullable=False),
        sa.Column("quantity", _enum("Hp(10)", "Hp(0.07)", "Hp(3)", name="quantity"), nullable=False),
        sa.Column("location", _enum("whole_body", "left_hand", "right_hand", "eye", "abdomen", name="location"),
                  nullable=False),
        sa.Column("value_msv", sa.Double(), nullable=True),
        sa.Column("result", _enum("measured", "below_mrd", "unused", "lost", "not_returned", name="result"),
                  nullable=False),
        sa.Column("mrd_msv", sa.Double(), nullable=True),
        sa.Column("source", _enum("dosimetry_report", "rso_estimate", "incident_estimate", name="dosesource"),
                  nullable=False),
        sa.Column("basis", sa.Text(), nullable=True),
        sa.Column("entered_unit", sa.String(length=8), nullable=False),
        sa.Column("id", sa.Integer(), nullable=False),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_import_staging")),
    )
    op.create_index("ix_import_staging_run_line", "import_staging", ["run", "line"])


def downgrade():
    op.drop_index("ix_import_staging_run_line", table_name="import_staging")
    op.drop_table("import_staging")
