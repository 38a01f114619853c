"""Revision snapshots in the database: each part stored once per study, revisions list them.

Freezing writes only the parts the study does not hold yet (an unchanged node costs its
digest in the manifest); reading puts a snapshot back together exactly as it was frozen
(app/db/snapshot_parts.py says how it is split).
"""

import json
from collections.abc import Iterable, Iterator
from typing import Any

from sqlalchemy import insert, literal
from sqlalchemy.orm import object_session
from sqlmodel import Session, col, select

from app.db.models import Revision, SnapshotPart
from app.db.snapshot_parts import (
    Manifest,
    SnapshotPartsError,
    assemble_snapshot,
    manifest_digests,
    split_snapshot,
)

# Any in this module: a snapshot is a study file's JSON (the file boundary).

# Digests asked for in one IN (...) list: far below SQLite's and PostgreSQL's limits.
DIGESTS_PER_QUERY = 500


def store_snapshot(session: Session, study_id: int, snapshot: dict[str, Any]) -> str:
    """Store the parts of `snapshot` the study does not hold yet; its manifest as JSON text
    (for Revision.snapshot_parts). Flushes nothing else and does not commit."""
    return store_parts(session, study_id, *split_snapshot(snapshot))


def store_parts(session: Session, study_id: int, manifest: Manifest,
                parts: dict[str, str]) -> str:
    """Store the parts (digest -> text) the study does not hold yet; the manifest as JSON."""
    held = held_digests(session, study_id, parts)
    new = [{"study_id": study_id, "digest": digest, "content": text}
           for digest, text in parts.items() if digest not in held]
    if new:
        session.execute(insert(SnapshotPart), new)
    return json.dumps(manifest)


def revision_manifest(revision: Revision) -> Manifest:
    """The revision's manifest (its snapshot's keys, each naming parts by digest)."""
    manifest: Manifest = json.loads(revision.snapshot_parts)
    return manifest


def load_snapshot(session: Session, revision: Revision) -> dict[str, Any]:
    """The revision's snapshot, put together from its parts."""
    manifest = revision_manifest(revision)
    texts = part_texts(session, revision.study_id, manifest_digests(manifest))
    return assemble_snapshot(manifest, lambda digest: json.loads(_text(texts, digest, revision)))


def snapshot_text(revision: Revision) -> str:
    """The revision's snapshot as a study file's JSON text, read through its own session."""
    session = object_session(revision)
    if session is None:
        raise SnapshotPartsError(f"revision '{revision.label}' is not attached to a session, "
                                 f"so its snapshot's parts cannot be read")
    return json.dumps(load_snapshot(session, revision))  # type: ignore[arg-type]


def part_texts(session: Session, study_id: int, digests: Iterable[str]) -> dict[str, str]:
    """The stored text of each named part of the study (missing ones are simply absent)."""
    return dict(_stored(session, study_id, digests, with_content=True))


def held_digests(session: Session, study_id: int, digests: Iterable[str]) -> set[str]:
    """Which of these parts the study holds."""
    return {digest for digest, _ in _stored(session, study_id, digests, with_content=False)}


def _stored(session: Session, study_id: int, digests: Iterable[str],
            *, with_content: bool) -> Iterator[tuple[str, str]]:
    """(digest, content or "") of each named part the study holds, asked in chunks."""
    wanted = list(dict.fromkeys(digests))
    content: Any = SnapshotPart.content if with_content else literal("")
    for start in range(0, len(wanted), DIGESTS_PER_QUERY):
        chunk = wanted[start:start + DIGESTS_PER_QUERY]
        yield from session.exec(select(SnapshotPart.digest, content).where(
            SnapshotPart.study_id == study_id, col(SnapshotPart.digest).in_(chunk))).all()


def _text(texts: dict[str, str], digest: str, revision: Revision) -> str:
    if digest not in texts:
        raise SnapshotPartsError(f"revision '{revision.label}' names snapshot part {digest}, "
                                 f"which the database does not hold; every part a revision "
                                 f"names must be stored")
    return texts[digest]
