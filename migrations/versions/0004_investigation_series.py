"""Investigations name the series that crossed (lens and skin can share Hp(0.07) records).

Revision ID: 0004
Revises: 0003
"""
import sqlalchemy as sa
from alembic import op

revision = "0004"
down_revision = "0003"
branch_labels = None
depends_on = None

SERIES = sa.Enum("effective", "skin", "lens", "left_hand", "right_hand", "worst_hand", "fetus",
                 name="series", native_enum=False, create_constraint=True, length=32)
OLD_KEY = ["person_id", "quantity", "location", "period", "period_start", "level"]
# Rows raised before this column existed: the series their records most likely belong to.
BACKFILL = """
UPDATE investigation SET series = CASE
    WHEN location = 'eye' THEN 'lens'
    WHEN location IN ('left_hand', 'right_hand') THEN location
    WHEN location = 'abdomen' OR period = 'pregnancy' THEN 'fetus'
    WHEN quantity = 'Hp(0.07)' THEN 'skin'
    ELSE 'effective' END
"""


def upgrade():
    with op.batch_alter_table("investigation", schema=None) as batch_op:
        batch_op.add_column(sa.Column("series", SERIES, nullable=True))
    op.execute(BACKFILL)
    with op.batch_alter_table("investigation", schema=None) as batch_op:
        batch_op.alter_column("series", existing_type=SERIES, nullable=False)
        batch_op.drop_constraint("uq_investigation_crossing", type_="unique")
        batch_op.create_unique_constraint("uq_investigation_crossing", ["person_id", "series", *OLD_KEY[1:]])


def downgrade():
    with op.batch_alter_table("investigation", schema=None) as batch_op:
        batch_op.drop_constraint("uq_investigation_crossing", type_="unique")
        batch_op.create_unique_constraint("uq_investigation_crossing", OLD_KEY)
        # The enum's check names the column; SQLite's copied table would keep it without the column.
        batch_op.drop_constraint(batch_op.f("ck_investigation_series"), type_="check")
        batch_op.drop_column("series")
