"""What the method needs per step, and people not rated on a scenario (issue 9).

Steps gain: acts_after_sif (a layer acting after an added SIF does not reduce its demand),
modifier_kind and receptors (a conditional modifier reduces only the receptors it applies to),
cause_type, final_element_tag, alarm_on_bpcs and crew (independence checks),
per_opportunity_probability and opportunities_per_year (a per-task value against a per-year
frequency), time_available_minutes and time_to_detect_and_act_minutes (response-time rule).
Scenarios gain people_not_rated (a scenario with no injury potential). Every new column is
nullable or has a server default, so existing rows keep their meaning: no layer acts after, no
kind stated (applies to every receptor), people rated.

Revision ID: 9a3e5c71d2f4
Revises: 5e1a9c3d7b20
Create Date: 2026-12-02 07:15:00
"""
from collections.abc import Sequence

import sqlalchemy as sa
import sqlmodel
from alembic import op

revision: str = '9a3e5c71d2f4'
down_revision: str | None = '5e1a9c3d7b20'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

STEP_COLUMNS = (
    ("acts_after_sif", lambda: sa.Column("acts_after_sif", sa.Boolean(),
                                         server_default=sa.false(), nullable=False)),
    ("modifier_kind", lambda: sa.Column("modifier_kind",
                                        sqlmodel.AutoString(length=30), nullable=True)),
    ("receptors", lambda: sa.Column("receptors", sqlmodel.AutoString(length=60), nullable=True)),
    ("cause_type", lambda: sa.Column("cause_type", sqlmodel.AutoString(length=30),
                                     nullable=True)),
    ("final_element_tag", lambda: sa.Column("final_element_tag", sqlmodel.AutoString(length=80),
                                            server_default="", nullable=False)),
    ("alarm_on_bpcs", lambda: sa.Column("alarm_on_bpcs", sa.Boolean(), nullable=True)),
    ("crew", lambda: sa.Column("crew", sqlmodel.AutoString(length=80), server_default="",
                               nullable=False)),
    ("per_opportunity_probability", lambda: sa.Column("per_opportunity_probability",
                                                      sa.Float(), nullable=True)),
    ("opportunities_per_year", lambda: sa.Column("opportunities_per_year", sa.Float(),
                                                 nullable=True)),
    ("time_available_minutes", lambda: sa.Column("time_available_minutes", sa.Float(),
                                                 nullable=True)),
    ("time_to_detect_and_act_minutes", lambda: sa.Column("time_to_detect_and_act_minutes",
                                                         sa.Float(), nullable=True)),
)


def upgrade() -> None:
    """Apply this revision.

    Plain ADD COLUMN, not a batch rebuild: SQLite adds a column with a constant default in
    place, and a rebuild would drop the tables' AUTOINCREMENT (ids never reused).
    """
    op.add_column('scenario', sa.Column('people_not_rated', sa.Boolean(),
                                        server_default=sa.false(), nullable=False))
    for _, column in STEP_COLUMNS:
        op.add_column('step', column())


def downgrade() -> None:
    """Undo this revision (a rebuild on SQLite that keeps AUTOINCREMENT)."""
    keep = {"recreate": "always", "table_kwargs": {"sqlite_autoincrement": True}}
    with op.batch_alter_table('step', schema=None, **keep) as batch_op:  # type: ignore[arg-type]
        for name, _ in reversed(STEP_COLUMNS):
            batch_op.drop_column(name)
    with op.batch_alter_table('scenario', schema=None, **keep) as batch_op:  # type: ignore[arg-type]
        batch_op.drop_column('people_not_rated')
