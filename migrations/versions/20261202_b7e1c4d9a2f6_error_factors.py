"""Error factors: a typed EF per step and the study's default EF per step kind.

step.error_factor (nullable float): the team's error factor (95th over 50th percentile of a
lognormal whose median is the entered value). study.error_factor_default_<kind> (nullable
floats, one per step kind): used when a step has no EF of its own, no estimate round with a
spread and no typical-value range. Nullable columns only: existing rows keep their meaning
(no uncertainty recorded).

Revision ID: b7e1c4d9a2f6
Revises: b7c4e1f0a935
Create Date: 2026-12-02 09:30:00.000000
"""
from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = 'b7e1c4d9a2f6'
down_revision: str | None = 'b7c4e1f0a935'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

STUDY_DEFAULTS = ('error_factor_default_initiating_event',
                  'error_factor_default_enabling_condition',
                  'error_factor_default_conditional_modifier',
                  'error_factor_default_ipl')


def upgrade() -> None:
    """Apply this revision."""
    with op.batch_alter_table('step', schema=None) as batch_op:
        batch_op.add_column(sa.Column('error_factor', sa.Float(), nullable=True))
    with op.batch_alter_table('study', schema=None) as batch_op:
        for name in STUDY_DEFAULTS:
            batch_op.add_column(sa.Column(name, sa.Float(), nullable=True))


def downgrade() -> None:
    """Undo this revision."""
    with op.batch_alter_table('study', schema=None) as batch_op:
        for name in reversed(STUDY_DEFAULTS):
            batch_op.drop_column(name)
    with op.batch_alter_table('step', schema=None) as batch_op:
        batch_op.drop_column('error_factor')
