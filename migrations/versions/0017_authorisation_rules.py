"""authorisation rules: one current authorisation per person and instrument, the supervisor of a
supervised session, and the lab's choices for the public, late checks and open investigations

Revision ID: 0017
Revises: 0021
"""
from alembic import op
import sqlalchemy as sa

revision = "0017"
down_revision = "0021"
branch_labels = None
depends_on = None

# An older row of a pair that had two current authorisations is ended by its newer twin, which
# is how the logbook renews one from now on.
_END_OLDER_TWINS = """
UPDATE authorisation SET revoked_at = (
    SELECT MIN(newer.granted_at) FROM authorisation AS newer
    WHERE newer.person_id = authorisation.person_id
      AND newer.instrument_id = authorisation.instrument_id
      AND newer.revoked_at IS NULL AND newer.id > authorisation.id),
  replaced_by_id = (
    SELECT MAX(newer.id) FROM authorisation AS newer
    WHERE newer.person_id = authorisation.person_id
      AND newer.instrument_id = authorisation.instrument_id
      AND newer.revoked_at IS NULL AND newer.id > authorisation.id)
WHERE revoked_at IS NULL AND EXISTS (
    SELECT 1 FROM authorisation AS newer
    WHERE newer.person_id = authorisation.person_id
      AND newer.instrument_id = authorisation.instrument_id
      AND newer.revoked_at IS NULL AND newer.id > authorisation.id)
"""


def upgrade():
    with op.batch_alter_table("authorisation") as batch:
        batch.add_column(sa.Column("replaced_by_id", sa.Integer(), nullable=True))
        batch.create_foreign_key(batch.f("fk_authorisation_replaced_by_id_authorisation"),
                                 "authorisation", ["replaced_by_id"], ["id"])
    op.execute(_END_OLDER_TWINS)
    with op.batch_alter_table("authorisation") as batch:
        batch.create_index("uq_authorisation_current", ["person_id", "instrument_id"], unique=True,
                           sqlite_where=sa.text("revoked_at IS NULL"),
                           postgresql_where=sa.text("revoked_at IS NULL"))

    with op.batch_alter_table("instrument_session") as batch:
        batch.add_column(sa.Column("supervisor_id", sa.Integer(), nullable=True))
        batch.create_foreign_key(batch.f("fk_instrument_session_supervisor_id_person"), "person",
                                 ["supervisor_id"], ["id"])

    with op.batch_alter_table("lab_settings") as batch:
        batch.add_column(sa.Column("public_authorisation", sa.String(length=16), nullable=False,
                                   server_default="supervised"))
        batch.add_column(sa.Column("late_check_policy", sa.String(length=16), nullable=False,
                                   server_default="warn"))
        batch.add_column(sa.Column("investigation_policy", sa.String(length=16), nullable=False,
                                   server_default="tell"))
        batch.create_check_constraint(batch.f("ck_lab_settings_public_authorisation_known"),
                                      "public_authorisation IN ('supervised', 'none')")
        batch.create_check_constraint(batch.f("ck_lab_settings_late_check_policy_known"),
                                      "late_check_policy IN ('warn', 'refuse')")
        batch.create_check_constraint(batch.f("ck_lab_settings_investigation_policy_known"),
                                      "investigation_policy IN ('tell', 'clearance')")


def downgrade():
    with op.batch_alter_table("lab_settings") as batch:
        batch.drop_constraint(batch.f("ck_lab_settings_investigation_policy_known"), type_="check")
        batch.drop_constraint(batch.f("ck_lab_settings_late_check_policy_known"), type_="check")
        batch.drop_constraint(batch.f("ck_lab_settings_public_authorisation_known"), type_="check")
        batch.drop_column("investigation_policy")
        batch.drop_column("late_check_policy")
        batch.drop_column("public_authorisation")

    with op.batch_alter_table("instrument_session") as batch:
        batch.drop_constraint(batch.f("fk_instrument_session_supervisor_id_person"),
                              type_="foreignkey")
        batch.drop_column("supervisor_id")

    with op.batch_alter_table("authorisation") as batch:
        batch.drop_index("uq_authorisation_current")
        batch.drop_constraint(batch.f("fk_authorisation_replaced_by_id_authorisation"),
                              type_="foreignkey")
        batch.drop_column("replaced_by_id")
