"""What the spreadsheet exports show, stored beside each scenario's result.

New column scenario_result.table_figures: JSON of the governing result, each receptor's line,
the figures with flagged credits withdrawn, the governing line's uncertainty, each step's
error factor and the IPL-check warnings, as the CSV and the workbook show them
(app/services/study/table_figures.py), so an export reads and formats them instead of
computing the spread and the checks for every scenario. Rows written before this revision lack
it, so the study rows of result_total are marked as written by older code: each study is
computed whole again on its next read (app/services/study/stored_results.py, ensure_current;
RESULTS_VERSION is 3 from here on).

Revision ID: 6d2a9c4e7b15
Revises: 3f6b2d8e41c7
Create Date: 2026-12-02 16:00:00.000000
"""
from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = '6d2a9c4e7b15'
down_revision: str | None = '3f6b2d8e41c7'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

OLDER_VERSION = 2  # the stored results before this column


def upgrade() -> None:
    """Apply this revision (plain ADD COLUMN: SQLite adds a column with a constant default in
    place), then mark every study's stored results as older so they are rebuilt."""
    op.add_column('scenario_result', sa.Column('table_figures', sa.Text(), server_default='',
                                               nullable=False))
    op.execute(f"UPDATE result_total SET results_version = {OLDER_VERSION} WHERE node_id = 0")


def downgrade() -> None:
    """Undo this revision (the older code rebuilds nothing: its rows lack no column it reads)."""
    with op.batch_alter_table('scenario_result', schema=None) as batch_op:
        batch_op.drop_column('table_figures')
