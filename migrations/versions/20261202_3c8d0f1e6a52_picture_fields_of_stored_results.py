"""What the risk picture counts and ranks, stored beside each scenario's result.

New columns of scenario_result: the SIL band of the added function needed, the governing
category, gap, SIL band and demand mode with flagged credits withdrawn, the number of IPL-check
warnings, and the uncertainty of the verdict (P(meets target), median, 5 % and 95 %). Rows
written before this revision lack them, so the study rows of result_total are marked as
written by older code: each study is computed whole again on its next read
(app/services/study/stored_results.py, ensure_current; RESULTS_VERSION is 2 from here on).

Revision ID: 3c8d0f1e6a52
Revises: 9e9dca590747
Create Date: 2026-12-02 12:45:00.000000
"""
from collections.abc import Sequence

import sqlalchemy as sa
import sqlmodel
from alembic import op

revision: str = '3c8d0f1e6a52'
down_revision: str | None = '9e9dca590747'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

COLUMNS = (
    ("sil_band", lambda: sa.Column("sil_band", sqlmodel.AutoString(length=40),
                                   server_default="", nullable=False)),
    ("withdrawn_category_id", lambda: sa.Column("withdrawn_category_id", sa.Integer(),
                                                nullable=True)),
    ("withdrawn_gap_orders", lambda: sa.Column("withdrawn_gap_orders", sa.Float(),
                                               nullable=True)),
    ("withdrawn_sil_band", lambda: sa.Column("withdrawn_sil_band",
                                             sqlmodel.AutoString(length=40),
                                             server_default="", nullable=False)),
    ("withdrawn_demand_mode", lambda: sa.Column("withdrawn_demand_mode",
                                                sqlmodel.AutoString(length=20),
                                                server_default="", nullable=False)),
    ("warning_count", lambda: sa.Column("warning_count", sa.Integer(), server_default="0",
                                        nullable=False)),
    ("uncertain", lambda: sa.Column("uncertain", sa.Boolean(), server_default=sa.false(),
                                    nullable=False)),
    ("p_meets", lambda: sa.Column("p_meets", sa.Float(), nullable=True)),
    ("spread_median", lambda: sa.Column("spread_median", sa.Float(), nullable=True)),
    ("spread_p05", lambda: sa.Column("spread_p05", sa.Float(), nullable=True)),
    ("spread_p95", lambda: sa.Column("spread_p95", sa.Float(), nullable=True)),
)


def upgrade() -> None:
    """Apply this revision (plain ADD COLUMN: SQLite adds a column with a constant default in
    place), then mark every study's stored results as older so they are rebuilt."""
    for _, column in COLUMNS:
        op.add_column('scenario_result', column())
    op.execute("UPDATE result_total SET results_version = 1 WHERE node_id = 0")


def downgrade() -> None:
    """Undo this revision (the older code rebuilds nothing: its rows lack no column)."""
    with op.batch_alter_table('scenario_result', schema=None) as batch_op:
        for name, _ in reversed(COLUMNS):
            batch_op.drop_column(name)
