"""login sessions that end on the server: a login epoch per person, idle timeout and lifetime

Revision ID: 0013
Revises: 0012
Create Date: 2026-12-02 05:10:00

"""
from alembic import op
import sqlalchemy as sa

from models.audit.verify_ops import record_baseline

# revision identifiers, used by Alembic.
revision = '0013'
down_revision = '0012'
branch_labels = None
depends_on = None


def upgrade():
    op.create_table('login_epoch',
    sa.Column('person_id', sa.Integer(), nullable=False),
    sa.Column('epoch', sa.Integer(), nullable=False),
    sa.Column('id', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['person_id'], ['person.id'], name=op.f('fk_login_epoch_person_id_person')),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_login_epoch')),
    sa.UniqueConstraint('person_id', name=op.f('uq_login_epoch_person_id'))
    )
    with op.batch_alter_table('lab_settings', schema=None) as batch_op:
        batch_op.add_column(sa.Column('idle_timeout_minutes', sa.Integer(), nullable=False,
                                      server_default='480'))
        batch_op.add_column(sa.Column('session_lifetime_hours', sa.Integer(), nullable=False,
                                      server_default='168'))
        batch_op.create_check_constraint(op.f('ck_lab_settings_idle_timeout_in_range'),
                                         'idle_timeout_minutes BETWEEN 5 AND 1440')
        batch_op.create_check_constraint(op.f('ck_lab_settings_session_lifetime_in_range'),
                                         'session_lifetime_hours BETWEEN 1 AND 720')
    # The settings row gained two columns: record them, so the audit check covers them from now on.
    record_baseline(op.get_bind(), "Recorded as found after adding the login session settings.")


def downgrade():
    with op.batch_alter_table('lab_settings', schema=None) as batch_op:
        batch_op.drop_constraint(op.f('ck_lab_settings_session_lifetime_in_range'), type_='check')
        batch_op.drop_constraint(op.f('ck_lab_settings_idle_timeout_in_range'), type_='check')
        batch_op.drop_column('session_lifetime_hours')
        batch_op.drop_column('idle_timeout_minutes')
    op.drop_table('login_epoch')
