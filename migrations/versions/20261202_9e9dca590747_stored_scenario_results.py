"""Stored per-scenario results and running node and study counts.

scenario_result holds each scenario's computed results (scalars for counts and ranking, the
rest as JSON); result_total the running counts of each node and (node_id 0) of each study.
Existing studies are backfilled on their first read: a study without its result_total row is
computed whole once (app/services/study/stored_results.py, ensure_current), so this migration
needs none of the arithmetic.

Revision ID: 9e9dca590747
Revises: b7e1c4d9a2f6
Create Date: 2026-12-02 09:20:00.000000
"""
from collections.abc import Sequence

import sqlalchemy as sa
import sqlmodel
from alembic import op

revision: str = '9e9dca590747'
down_revision: str | None = 'b7e1c4d9a2f6'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    """Apply this revision."""
    op.create_table(
        'scenario_result',
        sa.Column('scenario_id', sa.Integer(), nullable=False),
        sa.Column('study_id', sa.Integer(), nullable=False),
        sa.Column('node_id', sa.Integer(), nullable=False),
        sa.Column('computed', sa.Boolean(), nullable=False),
        sa.Column('incomplete', sa.Boolean(), nullable=False),
        sa.Column('short', sa.Boolean(), nullable=False),
        sa.Column('flagged', sa.Boolean(), nullable=False),
        sa.Column('short_withdrawn', sa.Boolean(), nullable=False),
        sa.Column('category_id', sa.Integer(), nullable=True),
        sa.Column('gap_orders', sa.Float(), nullable=True),
        sa.Column('receptor', sqlmodel.sql.sqltypes.AutoString(length=20), nullable=False),
        sa.Column('mitigated_frequency', sa.Float(), nullable=True),
        sa.Column('tolerable_frequency', sa.Float(), nullable=True),
        sa.Column('ratio', sa.Float(), nullable=True),
        sa.Column('sil_label', sqlmodel.sql.sqltypes.AutoString(length=60), nullable=False),
        sa.Column('demand_mode', sqlmodel.sql.sqltypes.AutoString(length=20), nullable=False),
        sa.Column('withdrawn_mitigated_frequency', sa.Float(), nullable=True),
        sa.Column('withdrawn_ratio', sa.Float(), nullable=True),
        sa.Column('error', sa.String(), nullable=False),
        sa.Column('figures', sa.Text(), nullable=False),
        sa.ForeignKeyConstraint(['node_id'], ['node.id'],
                                name=op.f('fk_scenario_result_node_id_node'), ondelete='CASCADE'),
        sa.ForeignKeyConstraint(['scenario_id'], ['scenario.id'],
                                name=op.f('fk_scenario_result_scenario_id_scenario'),
                                ondelete='CASCADE'),
        sa.ForeignKeyConstraint(['study_id'], ['study.id'],
                                name=op.f('fk_scenario_result_study_id_study'),
                                ondelete='CASCADE'),
        sa.PrimaryKeyConstraint('scenario_id', name=op.f('pk_scenario_result')),
    )
    op.create_index('ix_scenario_result_study_node', 'scenario_result',
                    ['study_id', 'node_id'], unique=False)
    op.create_table(
        'result_total',
        sa.Column('study_id', sa.Integer(), nullable=False),
        sa.Column('node_id', sa.Integer(), nullable=False),
        sa.Column('results_version', sa.Integer(), nullable=False),
        sa.Column('scenario_count', sa.Integer(), nullable=False),
        sa.Column('short_count', sa.Integer(), nullable=False),
        sa.Column('unresolved_count', sa.Integer(), nullable=False),
        sa.Column('flagged_count', sa.Integer(), nullable=False),
        sa.Column('short_withdrawn_count', sa.Integer(), nullable=False),
        sa.Column('incomplete_count', sa.Integer(), nullable=False),
        sa.ForeignKeyConstraint(['study_id'], ['study.id'],
                                name=op.f('fk_result_total_study_id_study'), ondelete='CASCADE'),
        sa.PrimaryKeyConstraint('study_id', 'node_id', name=op.f('pk_result_total')),
    )


def downgrade() -> None:
    """Undo this revision."""
    op.drop_table('result_total')
    op.drop_index('ix_scenario_result_study_node', table_name='scenario_result')
    op.drop_table('scenario_result')
