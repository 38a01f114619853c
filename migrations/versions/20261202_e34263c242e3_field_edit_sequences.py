"""Keystroke order kept in the database (field_edit); undo set-aside reasons.

One row per (entity, row id, field, page): the newest sequence number that page sent for the
field and the text it last saved there. The save compares and sets it in the same transaction
as the value, so the stale-keystroke guard holds across several server workers (it lived in
one process's memory before) and the conflict check can tell a page's own earlier keystroke
from someone else's edit.

Also adds deleted_item.blocked_reason: undo is per person, and a delete that cannot come back
(what it hung from was deleted since) is set aside with the reason instead of blocking every
later undo.

Revision ID: e34263c242e3
Revises: 9a3e5c71d2f4
Create Date: 2026-12-02 07:03:45.854691
"""
from collections.abc import Sequence

import sqlalchemy as sa
import sqlmodel
from alembic import op

revision: str = 'e34263c242e3'
down_revision: str | None = '9a3e5c71d2f4'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    """Apply this revision."""
    op.create_table('field_edit',
    sa.Column('study_id', sa.Integer(), nullable=False),
    sa.Column('entity', sqlmodel.sql.sqltypes.AutoString(length=40), nullable=False),
    sa.Column('row_id', sa.Integer(), nullable=False),
    sa.Column('field', sqlmodel.sql.sqltypes.AutoString(length=60), nullable=False),
    sa.Column('client', sqlmodel.sql.sqltypes.AutoString(length=64), nullable=False),
    sa.Column('seq', sa.Integer(), nullable=False),
    sa.Column('written', sa.Text(), nullable=True),
    sa.ForeignKeyConstraint(['study_id'], ['study.id'], name=op.f('fk_field_edit_study_id_study'), ondelete='CASCADE'),
    sa.PrimaryKeyConstraint('entity', 'row_id', 'field', 'client', name=op.f('pk_field_edit'))
    )
    with op.batch_alter_table('field_edit', schema=None) as batch_op:
        batch_op.create_index(batch_op.f('ix_field_edit_study_id'), ['study_id'], unique=False)
    with op.batch_alter_table('deleted_item', schema=None) as batch_op:
        batch_op.add_column(sa.Column('blocked_reason', sqlmodel.sql.sqltypes.AutoString(length=500),
                                      server_default='', nullable=False))



def downgrade() -> None:
    """Undo this revision."""
    with op.batch_alter_table('deleted_item', schema=None) as batch_op:
        batch_op.drop_column('blocked_reason')
    with op.batch_alter_table('field_edit', schema=None) as batch_op:
        batch_op.drop_index(batch_op.f('ix_field_edit_study_id'))

    op.drop_table('field_edit')
