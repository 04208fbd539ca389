"""rule_change: the limit set and counting policies with the lab date from which each applied, so a
past date is evaluated with the rules that stood then; seeded with the rules in force, for every date

Revision ID: 0031
Revises: 0030
"""
import sqlalchemy as sa
from alembic import op

from models.audit.verify_ops import record_baseline

revision = "0031"
down_revision = "0030"
branch_labels = None
depends_on = None


def _enum(name: str, *values: str) -> sa.Enum:
    """A portable enum column as models.core.base.enum_column makes it."""
    return sa.Enum(*values, name=name, native_enum=False, create_constraint=True, length=32)


def upgrade():
    op.create_table(
        "rule_change",
        sa.Column("from_on", sa.Date(), nullable=False),
        sa.Column("sets_limit_set", sa.Boolean(), nullable=False),
        sa.Column("limit_set_id", sa.Integer(), nullable=True),
        sa.Column("proration", _enum("proration", "prorate_days", "wear_end"), nullable=True),
        sa.Column("mrd_policy", _enum("mrdpolicy", "zero", "half", "full"), nullable=True),
        sa.Column("lens_source", _enum("lenssource", "hp007", "hp10"), nullable=True),
        sa.Column("five_year_first_year", sa.Integer(), nullable=True),
        sa.Column("changed_by_id", sa.Integer(), nullable=True),
        sa.Column("changed_at", sa.DateTime(), nullable=True),
        sa.Column("reason", sa.Text(), nullable=False),
        sa.Column("id", sa.Integer(), nullable=False),
        sa.CheckConstraint("from_on BETWEEN '1950-01-01' AND '2100-12-31'",
                           name=op.f("ck_rule_change_from_on_in_range")),
        sa.CheckConstraint("sets_limit_set OR limit_set_id IS NULL",
                           name=op.f("ck_rule_change_set_only_when_setting")),
        sa.CheckConstraint(
            "(proration IS NULL AND mrd_policy IS NULL AND lens_source IS NULL AND five_year_first_year IS NULL) OR "
            "(proration IS NOT NULL AND mrd_policy IS NOT NULL AND lens_source IS NOT NULL "
            "AND five_year_first_year IS NOT NULL)", name=op.f("ck_rule_change_policies_all_or_none")),
        sa.CheckConstraint("sets_limit_set OR proration IS NOT NULL",
                           name=op.f("ck_rule_change_changes_something")),
        sa.ForeignKeyConstraint(["changed_by_id"], ["person.id"],
                                name=op.f("fk_rule_change_changed_by_id_person")),
        sa.ForeignKeyConstraint(["limit_set_id"], ["limit_set.id"],
                                name=op.f("fk_rule_change_limit_set_id_limit_set")),
        sa.PrimaryKeyConstraint("id", name=op.f("pk_rule_change")),
    )
    with op.batch_alter_table("rule_change") as batch:
        batch.create_index(batch.f("ix_rule_change_from_on"), ["from_on"], unique=False)
    # The rules in force when the history began apply to every earlier date: nothing says otherwise.
    op.execute(
        "INSERT INTO rule_change (from_on, sets_limit_set, limit_set_id, proration, mrd_policy, lens_source, "
        "five_year_first_year, changed_by_id, changed_at, reason) "
        "SELECT '1950-01-01', true, limit_set_id, proration, mrd_policy, lens_source, five_year_first_year, "
        "NULL, NULL, 'The rules in force when their history began (migration 0031).' "
        "FROM lab_settings WHERE id = 1"
    )
    record_baseline(op.get_bind(), "Recorded as found after migration 0031 (the rules' history).")


def downgrade():
    with op.batch_alter_table("rule_change") as batch:
        batch.drop_index(batch.f("ix_rule_change_from_on"))
    op.drop_table("rule_change")
