"""Access state for serving on a meeting-room network.

Adds access_state, a one-row table holding the session-cookie signing key, the facilitator
passphrase's salted scrypt hash, the day's join code and the session generation counter
(raising it ends every session). It belongs to no study and is never exported or logged.

Revision ID: 5e1a9c3d7b20
Revises: 5e1a0c7d2b94
Create Date: 2026-12-02 06:15:00
"""
from collections.abc import Sequence

import sqlalchemy as sa
import sqlmodel
from alembic import op

revision: str = '5e1a9c3d7b20'
down_revision: str | None = '5e1a0c7d2b94'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    """Apply this revision."""
    op.create_table(
        'access_state',
        sa.Column('id', sa.Integer(), nullable=False),
        sa.Column('secret_key', sqlmodel.sql.sqltypes.AutoString(length=100), nullable=False),
        sa.Column('passphrase_hash', sqlmodel.sql.sqltypes.AutoString(length=300), nullable=False),
        sa.Column('join_code', sqlmodel.sql.sqltypes.AutoString(length=20), nullable=False),
        sa.Column('join_code_day', sa.Date(), nullable=True),
        sa.Column('session_generation', sa.Integer(), nullable=False),
        sa.PrimaryKeyConstraint('id', name=op.f('pk_access_state')),
        sqlite_autoincrement=True,  # ids are never reused (revision 5e1a0c7d2b94)
    )


def downgrade() -> None:
    """Undo this revision."""
    op.drop_table('access_state')
