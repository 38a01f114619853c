"""Team word scale: the words a team uses for likelihoods and the number adopted for each.

Adds scale_word (study, unit per_year or probability, word, adopted value or none, position),
cascading with its study. A new table only.

Revision ID: fa5e8b5ffa3b
Revises: 7ad2ec0b0252
Create Date: 2026-12-02 07:22:51.014822
"""
from collections.abc import Sequence

import sqlalchemy as sa
import sqlmodel
from alembic import op

revision: str = 'fa5e8b5ffa3b'
down_revision: str | None = '7ad2ec0b0252'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    """Apply this revision."""
    op.create_table('scale_word',
    sa.Column('id', sa.Integer(), nullable=False),
    sa.Column('study_id', sa.Integer(), nullable=False),
    sa.Column('unit', sqlmodel.sql.sqltypes.AutoString(length=20), nullable=False),
    sa.Column('word', sqlmodel.sql.sqltypes.AutoString(length=60), nullable=False),
    sa.Column('value', sa.Float(), nullable=True),
    sa.Column('position', sa.Integer(), nullable=False),
    sa.ForeignKeyConstraint(['study_id'], ['study.id'], name=op.f('fk_scale_word_study_id_study'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('id', name=op.f('pk_scale_word')),
    sqlite_autoincrement=True
    )
    with op.batch_alter_table('scale_word', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_scale_word_study_id'), ['study_id'], unique=False)



def downgrade() -> None:
    """Undo this revision."""
    with op.batch_alter_table('scale_word', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_scale_word_study_id'))

    op.drop_table('scale_word')
