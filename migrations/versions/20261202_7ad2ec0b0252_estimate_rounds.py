"""Estimate rounds: private rounds of estimates on a step value, and their agreement.

Adds estimate_round (on a step or on a word of the team's word scale; question, unit, state open/revealed/agreed, names shown or hidden, and
the agreed method, value and basis), round_estimate (one per person and round, entered by the
person's own device or by the scribe) and round_dissent. All cascade with their study, and a
round with its step. New tables only: nothing existing is rebuilt.

Revision ID: 7ad2ec0b0252
Revises: e34263c242e3
Create Date: 2026-12-02 07:03:19.508063
"""
from collections.abc import Sequence

import sqlalchemy as sa
import sqlmodel
from alembic import op

revision: str = '7ad2ec0b0252'
down_revision: str | None = 'e34263c242e3'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    """Apply this revision."""
    op.create_table('estimate_round',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('study_id', sa.Integer(), nullable=False),
    sa.Column('step_id', sa.Integer(), nullable=True),
    sa.Column('word', sqlmodel.sql.sqltypes.AutoString(length=60), nullable=True),
    sa.Column('number', sa.Integer(), nullable=False),
    sa.Column('question', sqlmodel.sql.sqltypes.AutoString(length=300), nullable=False),
    sa.Column('unit', sqlmodel.sql.sqltypes.AutoString(length=20), nullable=False),
    sa.Column('state', sqlmodel.sql.sqltypes.AutoString(length=20), nullable=False),
    sa.Column('names_shown', sa.Boolean(), nullable=False),
    sa.Column('opened_by', sqlmodel.sql.sqltypes.AutoString(length=120), nullable=False),
    sa.Column('created_at', sqlmodel.sql.sqltypes.UTCDateTime(), nullable=False),
    sa.Column('updated_at', sqlmodel.sql.sqltypes.UTCDateTime(), nullable=False),
    sa.Column('agreed_method', sqlmodel.sql.sqltypes.AutoString(length=20), nullable=True),
    sa.Column('agreed_value', sa.Float(), nullable=True),
    sa.Column('agreed_basis', sqlmodel.sql.sqltypes.AutoString(length=2000), nullable=False),
    sa.ForeignKeyConstraint(['step_id'], ['step.id'], name=op.f('fk_estimate_round_step_id_step'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['study_id'], ['study.id'], name=op.f('fk_estimate_round_study_id_study'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_estimate_round')),
    sqlite_autoincrement=True
    )
    with op.batch_alter_table('estimate_round', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_estimate_round_step_id'), ['step_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_estimate_round_study_id'), ['study_id'], unique=False)

    op.create_table('round_dissent',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('study_id', sa.Integer(), nullable=False),
    sa.Column('round_id', sa.Integer(), nullable=False),
    sa.Column('person', sqlmodel.sql.sqltypes.AutoString(length=120), nullable=False),
    sa.Column('reason', sqlmodel.sql.sqltypes.AutoString(length=1000), nullable=False),
    sa.Column('position', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['round_id'], ['estimate_round.id'], name=op.f('fk_round_dissent_round_id_estimate_round'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['study_id'], ['study.id'], name=op.f('fk_round_dissent_study_id_study'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_round_dissent')),
    sqlite_autoincrement=True
    )
    with op.batch_alter_table('round_dissent', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_round_dissent_round_id'), ['round_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_round_dissent_study_id'), ['study_id'], unique=False)

    op.create_table('round_estimate',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('study_id', sa.Integer(), nullable=False),
    sa.Column('round_id', sa.Integer(), nullable=False),
    sa.Column('person', sqlmodel.sql.sqltypes.AutoString(length=120), nullable=False),
    sa.Column('value', sa.Float(), nullable=False),
    sa.Column('value_text', sqlmodel.sql.sqltypes.AutoString(length=100), nullable=False),
    sa.Column('entered_by', sqlmodel.sql.sqltypes.AutoString(length=10), nullable=False),
    sa.Column('session_id', sqlmodel.sql.sqltypes.AutoString(length=100), nullable=False),
    sa.Column('updated_at', sqlmodel.sql.sqltypes.UTCDateTime(), nullable=False),
    sa.ForeignKeyConstraint(['round_id'], ['estimate_round.id'], name=op.f('fk_round_estimate_round_id_estimate_round'), ondelete='CASCADE'),
    sa.ForeignKeyConstraint(['study_id'], ['study.id'], name=op.f('fk_round_estimate_study_id_study'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_round_estimate')),
    sqlite_autoincrement=True
    )
    with op.batch_alter_table('round_estimate', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_round_estimate_round_id'), ['round_id'], unique=False)
        batch_op.create_index(batch_op.f('ix_round_estimate_study_id'), ['study_id'], unique=False)
        batch_op.create_index('uq_round_estimate_person', ['round_id', 'person'], unique=True)



def downgrade() -> None:
    """Undo this revision."""
    with op.batch_alter_table('round_estimate', schema=None) as batch_op:
        batch_op.drop_index('uq_round_estimate_person')
        batch_op.drop_index(batch_op.f('ix_round_estimate_study_id'))
        batch_op.drop_index(batch_op.f('ix_round_estimate_round_id'))

    op.drop_table('round_estimate')
    with op.batch_alter_table('round_dissent', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_round_dissent_study_id'))
        batch_op.drop_index(batch_op.f('ix_round_dissent_round_id'))

    op.drop_table('round_dissent')
    with op.batch_alter_table('estimate_round', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_estimate_round_study_id'))
        batch_op.drop_index(batch_op.f('ix_estimate_round_step_id'))

    op.drop_table('estimate_round')
