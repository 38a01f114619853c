"""Revision snapshots stored as shared, content-addressed parts.

A revision held its whole snapshot (a study file without history) as one text, so two
revisions of a 10,000-scenario study held two full copies. Now each part of a snapshot (each
node, and each of the study-level values: header, criteria, actions, participants, ...) is one
row of `snapshot_part`, keyed by the study and the SHA-256 of its compact JSON text, and a
revision keeps only its manifest in `revision.snapshot_parts` (app/db/snapshot_parts.py). This
revision converts every stored snapshot, one revision at a time, then drops the old column;
reading a converted revision gives back the same snapshot (tests/db/test_snapshot_parts.py).
Downgrading puts every whole snapshot back.

Revision ID: 3f6b2d8e41c7
Revises: 3c8d0f1e6a52
Create Date: 2026-12-02 12:40:00
"""
import json
from collections.abc import Sequence

import sqlalchemy as sa
import sqlmodel
from alembic import op

from app.db.snapshot_parts import assemble_snapshot, manifest_digests, split_snapshot

revision: str = '3f6b2d8e41c7'
down_revision: str | None = '3c8d0f1e6a52'
branch_labels: str | Sequence[str] | None = None
depends_on: str | Sequence[str] | None = None

REVISIONS = sa.table('revision', sa.column('id', sa.Integer), sa.column('study_id', sa.Integer),
                     sa.column('snapshot', sa.Text), sa.column('snapshot_parts', sa.Text))
PARTS = sa.table('snapshot_part', sa.column('study_id', sa.Integer),
                 sa.column('digest', sa.String), sa.column('content', sa.Text))


def _rebuilt_revision_table() -> object:
    # SQLite rebuilds the table to drop a column; keep its AUTOINCREMENT (migration 5e1a0c7d2b94).
    sqlite = op.get_bind().dialect.name == 'sqlite'
    return op.batch_alter_table('revision', recreate='always' if sqlite else 'auto',
                                table_kwargs={'sqlite_autoincrement': True} if sqlite else {})


def upgrade() -> None:
    """Apply this revision."""
    op.create_table(
        'snapshot_part',
        sa.Column('study_id', sa.Integer(), nullable=False),
        sa.Column('digest', sqlmodel.sql.sqltypes.AutoString(length=64), nullable=False),
        sa.Column('content', sa.Text(), nullable=False),
        sa.ForeignKeyConstraint(['study_id'], ['study.id'],
                                name=op.f('fk_snapshot_part_study_id_study'), ondelete='CASCADE'),
        sa.PrimaryKeyConstraint('study_id', 'digest', name=op.f('pk_snapshot_part')),
    )
    op.add_column('revision', sa.Column('snapshot_parts', sa.Text(), nullable=True))
    bind = op.get_bind()
    ids = bind.execute(sa.select(REVISIONS.c.id).order_by(REVISIONS.c.id)).scalars().all()
    for revision_id in ids:  # one snapshot in memory at a time
        study_id, text = bind.execute(sa.select(REVISIONS.c.study_id, REVISIONS.c.snapshot)
                                      .where(REVISIONS.c.id == revision_id)).one()
        manifest, parts = split_snapshot(json.loads(text))
        held = set(bind.execute(sa.select(PARTS.c.digest).where(
            PARTS.c.study_id == study_id, PARTS.c.digest.in_(list(parts)))).scalars())
        new = [{'study_id': study_id, 'digest': d, 'content': t}
               for d, t in parts.items() if d not in held]
        if new:
            bind.execute(PARTS.insert(), new)
        bind.execute(REVISIONS.update().where(REVISIONS.c.id == revision_id)
                     .values(snapshot_parts=json.dumps(manifest)))
    with _rebuilt_revision_table() as batch:  # type: ignore[attr-defined]
        batch.drop_column('snapshot')
        batch.alter_column('snapshot_parts', existing_type=sa.Text(), nullable=False)


def downgrade() -> None:
    """Undo this revision: every revision holds its whole snapshot again."""
    op.add_column('revision', sa.Column('snapshot', sa.Text(), nullable=True))
    bind = op.get_bind()
    ids = bind.execute(sa.select(REVISIONS.c.id).order_by(REVISIONS.c.id)).scalars().all()
    for revision_id in ids:
        study_id, listed = bind.execute(sa.select(REVISIONS.c.study_id,
                                                  REVISIONS.c.snapshot_parts)
                                        .where(REVISIONS.c.id == revision_id)).one()
        manifest = json.loads(listed)
        texts = dict(bind.execute(sa.select(PARTS.c.digest, PARTS.c.content).where(
            PARTS.c.study_id == study_id,
            PARTS.c.digest.in_(set(manifest_digests(manifest))))).all())
        whole = assemble_snapshot(manifest, lambda digest, found=texts: json.loads(found[digest]))
        bind.execute(REVISIONS.update().where(REVISIONS.c.id == revision_id)
                     .values(snapshot=json.dumps(whole)))
    with _rebuilt_revision_table() as batch:  # type: ignore[attr-defined]
        batch.drop_column('snapshot_parts')
        batch.alter_column('snapshot', existing_type=sa.Text(), nullable=False)
    op.drop_table('snapshot_part')
