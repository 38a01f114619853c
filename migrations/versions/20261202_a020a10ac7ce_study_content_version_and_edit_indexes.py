"""A study content version for the room poll, and two indexes that remove full scans.

study.content_version is raised in the transaction of every content change
(app/db/tracking.py), so the room view's poll reads one row instead of scanning seven tables.
ix_change_log_entry_target serves the keystroke's search for the same person's last edit of
the same field; ix_recommendation_scenario_scenario_id serves one scenario's action lookup.

Revision ID: a020a10ac7ce
Revises: fa5e8b5ffa3b
Create Date: 2026-12-02 08:10:00.000000
"""
from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = 'a020a10ac7ce'
down_revision: str | None = 'fa5e8b5ffa3b'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    """Apply this revision."""
    with op.batch_alter_table('study', schema=None) as batch_op:
        batch_op.add_column(sa.Column('content_version', sa.Integer(), server_default='0',
                                      nullable=False))
    op.create_index('ix_change_log_entry_target', 'change_log_entry',
                    ['entity', 'entity_id', 'field', 'at'], unique=False)
    op.create_index(op.f('ix_recommendation_scenario_scenario_id'), 'recommendation_scenario',
                    ['scenario_id'], unique=False)


def downgrade() -> None:
    """Undo this revision."""
    op.drop_index(op.f('ix_recommendation_scenario_scenario_id'),
                  table_name='recommendation_scenario')
    op.drop_index('ix_change_log_entry_target', table_name='change_log_entry')
    with op.batch_alter_table('study', schema=None) as batch_op:
        batch_op.drop_column('content_version')
