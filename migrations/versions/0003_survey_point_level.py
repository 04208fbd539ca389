"""each survey point names the action level it is held to

Revision ID: 0003
Revises: 0002

"""
from alembic import op
import sqlalchemy as sa


revision = "0003"
down_revision = "0002"
branch_labels = None
depends_on = None

POINT_LEVEL = sa.Enum("surface", "housing", name="pointlevel", native_enum=False,
                      create_constraint=True, length=32)


def upgrade():
    with op.batch_alter_table("survey_point", schema=None) as batch_op:
        batch_op.add_column(sa.Column("level", sa.String(length=32), nullable=True))
        batch_op.add_column(sa.Column("action_level_usv_h", sa.Double(), nullable=True))
    # Points surveyed before this change were all held to the survey's single level.
    op.execute("UPDATE survey_point SET level = 'surface', action_level_usv_h = "
               "(SELECT survey.action_level_usv_h FROM survey WHERE survey.id = survey_point.survey_id)")
    with op.batch_alter_table("survey_point", schema=None) as batch_op:
        batch_op.alter_column("level", existing_type=sa.String(length=32), type_=POINT_LEVEL,
                              nullable=False)
        batch_op.alter_column("action_level_usv_h", existing_type=sa.Double(), nullable=False)
        batch_op.create_check_constraint("point_level_positive", "action_level_usv_h > 0")


def downgrade():
    with op.batch_alter_table("survey_point", schema=None) as batch_op:
        batch_op.drop_constraint(batch_op.f("ck_survey_point_point_level_positive"), type_="check")
        batch_op.drop_constraint(batch_op.f("ck_survey_point_pointlevel"), type_="check")  # the enum's check
        batch_op.drop_column("action_level_usv_h")
        batch_op.drop_column("level")
