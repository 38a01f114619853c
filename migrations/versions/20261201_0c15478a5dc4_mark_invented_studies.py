"""Mark invented studies.

Adds study.invented (boolean, default false) so made-up demonstration data says so on its
pages and keeps `"invented": true` through export and import. Existing studies are real
studies, hence the false default.

Revision ID: 0c15478a5dc4
Revises: c739d4647d45
Create Date: 2026-12-01 23:43:55.625872
"""
from collections.abc import Sequence

import sqlalchemy as sa
from alembic import op

revision: str = '0c15478a5dc4'
down_revision: str | None = 'c739d4647d45'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None


def upgrade() -> None:
    """Apply this revision."""
    with op.batch_alter_table('study', schema=None) as batch_op:
        batch_op.add_column(sa.Column('invented', sa.Boolean(), server_default=sa.false(), nullable=False))



def downgrade() -> None:
    """Undo this revision."""
    with op.batch_alter_table('study', schema=None) as batch_op:
        batch_op.drop_column('invented')

