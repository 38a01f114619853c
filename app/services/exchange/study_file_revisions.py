"""The revisions section of the study file: revisions name shared snapshot parts.

Written: each revision lists its snapshot's parts by digest under `snapshot_from_parts`. A part
equal to the file's own study content (a node, the criteria, ... unchanged since the revision)
is that content; every other part named is written once under the top-level `snapshot_parts`
(digest -> the part's JSON). So two revisions of an unchanged study add little more than their
manifests, and the file stays self-contained. Read: every named part must be in the file, and
each part of `snapshot_parts` must match its digest (the SHA-256 of its compact JSON text,
app/db/snapshot_parts.py); each revision's snapshot is then put together and read exactly as
an embedded `snapshot` (which older files have, and still import).
"""

import json
from collections.abc import Callable
from typing import Any

from sqlmodel import Session, col, select

from app.db.models import Revision
from app.db.snapshot_parts import (
    SnapshotPartsError,
    assemble_snapshot,
    legacy_part_text,
    manifest_digests,
    part_digest,
    part_text,
    read_manifest,
    split_snapshot,
    text_holds,
)
from app.db.snapshot_store import part_texts, revision_manifest

# Any in this module: study-file rows are JSON objects (the file boundary).

PARTS_KEY = "snapshot_parts"
FROM_PARTS_KEY = "snapshot_from_parts"
PART_RULE = ("every part a revision names must be in the file: in snapshot_parts, or the "
             "study's own content unchanged")
# Not study content: what a revision's snapshot never holds.
HISTORY_KEYS = frozenset({"change_log", "revisions", PARTS_KEY, "computed_figures"})
DIGEST_RULE = ("a part's key must be the SHA-256 of its compact JSON text (as orjson writes "
               "it, or as Python's json.dumps did before)")


def export_revisions(session: Session, study_id: int, live: dict[str, Any]) -> dict[str, Any]:
    """The file's `revisions` and, when there are any, the `snapshot_parts` they name that
    the file's study content (`live`, as written) does not hold."""
    revisions = session.exec(
        select(Revision).where(Revision.study_id == study_id).order_by(col(Revision.id))
    ).all()
    manifests = [revision_manifest(r) for r in revisions]
    named = [digest for manifest in manifests for digest in manifest_digests(manifest)]
    texts = part_texts(session, study_id, named)
    section: dict[str, Any] = {"revisions": [
        {"label": r.label, "note": r.note, "frozen_at": r.frozen_at.isoformat(),
         "frozen_by": r.frozen_by, "signed_off_by": r.signed_off_by,
         "signed_off_at": r.signed_off_at.isoformat() if r.signed_off_at else None,
         FROM_PARTS_KEY: manifest}
        for r, manifest in zip(revisions, manifests, strict=True)]}
    if revisions:
        held = split_snapshot(_content(live))[1]
        section[PARTS_KEY] = {digest: json.loads(texts[digest])
                              for digest in dict.fromkeys(named) if digest not in held}
    return section


def _content(data: dict[str, Any]) -> dict[str, Any]:
    """The study content of a file: what a snapshot of it would hold."""
    return {key: value for key, value in data.items() if key not in HISTORY_KEYS}


def expand_revision_parts(data: dict[str, Any]) -> dict[str, Any]:
    """The file with each revision's snapshot put together from the parts it names; the same
    object when no revision names parts. Raises SnapshotPartsError naming the broken rule."""
    revisions = data.get("revisions")
    if PARTS_KEY not in data and not (isinstance(revisions, list) and any(
            isinstance(r, dict) and FROM_PARTS_KEY in r for r in revisions)):
        return data
    # As texts, each read afresh where it is used: no snapshot shares an object with the
    # study content or another revision, so changing one never changes another.
    content = _content(data)
    parts = {**_live_parts(content, part_text), **_checked_parts(data.get(PARTS_KEY, {}))}
    named = [digest for revision in revisions or [] if isinstance(revision, dict)
             for digest in _named(revision.get(FROM_PARTS_KEY))]
    if any(digest not in parts for digest in named):  # a file written before orjson
        parts = {**_live_parts(content, legacy_part_text), **parts}
    expanded = {key: value for key, value in data.items() if key != PARTS_KEY}
    expanded["revisions"] = [
        _expanded(revision, index, parts) for index, revision in enumerate(revisions or [])]
    return expanded


def _named(manifest: Any) -> list[str]:
    """The digests a manifest names, if it is shaped as one (its shape is checked later)."""
    if not isinstance(manifest, dict):
        return []
    return [d for named in manifest.values()
            for d in (named if isinstance(named, list) else [named]) if isinstance(d, str)]


def _live_parts(content: dict[str, Any], text_of: Callable[[Any], str]) -> dict[str, str]:
    """The file's own study content as parts; none when it cannot be written as JSON exactly
    (a part naming it is then missing, and refused by that rule)."""
    try:
        return split_snapshot(content, text_of)[1]
    except (TypeError, ValueError):  # orjson's refusal; a lone surrogate in UTF-8
        return {}


def _checked_parts(parts: Any) -> dict[str, str]:
    """The file's parts as texts (digest -> text), each checked against its digest."""
    if not isinstance(parts, dict):
        raise SnapshotPartsError(f"{PARTS_KEY}: an object of parts keyed by their digests")
    texts = {}
    for digest, value in parts.items():
        text = _text_keyed(digest, value)
        if text is None:
            raise SnapshotPartsError(
                f"{PARTS_KEY}.{digest}: the part's content hashes to {_digest_of(value)}; "
                f"{DIGEST_RULE} (the file was changed after it was written)")
        texts[digest] = text
    return texts


def _digest_of(value: Any) -> str:
    """The digest a part's content has today (or had, when orjson cannot write it)."""
    try:
        return part_digest(part_text(value))
    except (TypeError, ValueError):
        try:
            return part_digest(legacy_part_text(value))
        except (TypeError, ValueError):
            return "no digest (it is not writable as JSON text)"


def _text_keyed(digest: Any, value: Any) -> str | None:
    """The part's text whose SHA-256 is `digest` (today's text, else the legacy one); None
    when neither is."""
    for text_of in (part_text, legacy_part_text):
        try:
            text = text_of(value)
            if part_digest(text) == digest and (text_of is legacy_part_text
                                                or text_holds(text, value)):
                return text
        except (TypeError, ValueError):  # not writable exactly in that form
            continue
    return None


def _expanded(revision: Any, index: int, parts: dict[str, str]) -> Any:
    if not isinstance(revision, dict) or FROM_PARTS_KEY not in revision:
        return revision  # an embedded snapshot (or a shape validation will describe)
    where = f"revisions.{index}.{FROM_PARTS_KEY}"
    if "snapshot" in revision:
        raise SnapshotPartsError(f"revisions.{index}: a revision has either a snapshot or "
                                 f"{FROM_PARTS_KEY}, not both")
    manifest = read_manifest(revision[FROM_PARTS_KEY], where)
    for digest in manifest_digests(manifest):
        if digest not in parts:
            raise SnapshotPartsError(f"{where}: part {digest} is not in the file; {PART_RULE}")
    rest = {key: value for key, value in revision.items() if key != FROM_PARTS_KEY}
    return {**rest, "snapshot": assemble_snapshot(manifest,
                                                  lambda digest: json.loads(parts[digest]))}
