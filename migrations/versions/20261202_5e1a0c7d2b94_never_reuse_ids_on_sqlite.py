"""Never reuse ids on SQLite.

Without AUTOINCREMENT, SQLite gives a new row the highest id + 1, so deleting the newest row
and creating another hands out the same id again: a page opened before the delete then
edits or deletes someone else's new row. This revision rebuilds every table with a single
integer `id` key as `INTEGER PRIMARY KEY AUTOINCREMENT` (copying the rows, ids unchanged;
SQLite then remembers the highest id ever used in `sqlite_sequence`). PostgreSQL sequences
never go back, so on PostgreSQL this revision does nothing.

The rebuild drops and re-creates tables that others point at; migrations/env.py runs SQLite
migrations with foreign keys off and checks them before committing (SQLite's documented
procedure for table rebuilds), so the drop cascades nowhere.

Revision ID: 5e1a0c7d2b94
Revises: 0c15478a5dc4
Create Date: 2026-12-02 06:20:00
"""
from collections.abc import Sequence

from alembic import op

revision: str = '5e1a0c7d2b94'
down_revision: str | None = '0c15478a5dc4'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

# Parents before children; every table whose key is the single integer column `id`.
TABLES_WITH_ID = (
    'study', 'severity_category', 'node', 'deviation', 'scenario', 'step', 'safeguard',
    'recommendation', 'participant', 'session_day', 'change_log_entry', 'revision',
    'deleted_item',
)


def _rebuild(autoincrement: bool) -> None:
    if op.get_bind().dialect.name != 'sqlite':
        return
    for table in TABLES_WITH_ID:
        with op.batch_alter_table(table, recreate='always',
                                  table_kwargs={'sqlite_autoincrement': autoincrement}):
            pass


def upgrade() -> None:
    """Apply this revision."""
    _rebuild(autoincrement=True)


def downgrade() -> None:
    """Undo this revision."""
    _rebuild(autoincrement=False)
