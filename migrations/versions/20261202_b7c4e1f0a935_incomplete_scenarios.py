"""Incomplete scenarios: a new scenario's severity and initiating frequency may be missing.

A new scenario used to start with the severity of the scenario above it and an initiating
event of once a year, so the projector showed a target, a gap and a SIL the team never gave.
scenario.severity_category_id and step.value become nullable: None means "not given yet" and
the scenario is incomplete (app/services/study/completeness.py) until both are given.

SQLite changes a column's nullability by rebuilding the table; the rebuild keeps
AUTOINCREMENT (table_kwargs, as in 5e1a0c7d2b94) and migrations/env.py runs it with foreign
keys off. The downgrade puts back what the old schema needs: once a year for a missing
frequency and the study's first severity category for a missing severity.

Revision ID: b7c4e1f0a935
Revises: a020a10ac7ce
Create Date: 2026-12-02 09:30:00.000000
"""
from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = 'b7c4e1f0a935'
down_revision: str | None = 'a020a10ac7ce'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def _table_kwargs() -> dict[str, bool]:
    return {'sqlite_autoincrement': True} if op.get_bind().dialect.name == 'sqlite' else {}


def _set_nullable(nullable: bool) -> None:
    with op.batch_alter_table('scenario', table_kwargs=_table_kwargs()) as batch_op:
        batch_op.alter_column('severity_category_id', existing_type=sa.Integer(),
                              nullable=nullable)
    with op.batch_alter_table('step', table_kwargs=_table_kwargs()) as batch_op:
        batch_op.alter_column('value', existing_type=sa.Float(), nullable=nullable)


def upgrade() -> None:
    """Apply this revision."""
    _set_nullable(True)


def downgrade() -> None:
    """Undo this revision (missing values get the old defaults first)."""
    op.execute("UPDATE step SET value = 1.0, value_text = '1' WHERE value IS NULL")
    op.execute("UPDATE scenario SET severity_category_id = (SELECT MIN(c.id) FROM "
               "severity_category c WHERE c.study_id = scenario.study_id) "
               "WHERE severity_category_id IS NULL")
    _set_nullable(False)
