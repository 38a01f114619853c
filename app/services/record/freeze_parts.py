"""Freezing builds only the nodes that changed since this process last froze the study.

A node's part (app/db/snapshot_parts.py) is made of its own rows: the node, its deviations,
scenarios, steps and safeguards, and the refs of the criteria its scenarios are rated in.
Every one of those rows is versioned: each save that changes a row raises its `version` (no
save lowers one) and sets its `updated_at` to now (app/db/tracking.py,
app/db/compare_and_set.py); a new row adds one to the count and is the newest change; a
deleted one takes one away. So a node's fingerprint, the SHA-256 of its own row's id,
version and time and, per table, the count, the sums of ids and versions and the latest
change of its rows (one grouped SELECT per table), with every criterion's id, version and
time in order, changes with any change to the node's part: an edit raises a version sum, a
deletion the count, an insertion the latest time (which also tells apart two histories of
one row, as after a backup is restored and edited again). Only a deletion and an insertion
between two freezes that keep the count, both sums and the latest time (the clock set back
past the node's last change) would go unseen. Any change to the criteria builds every node
(a deleted category clears ratings in the database, ON DELETE SET NULL, raising no version).

Freezing remembers each node's fingerprint with its part's digest and, next time, builds and
writes only the nodes whose fingerprint it has not seen (a changed node; every node on a
first freeze in this process, which builds the whole study as before).
A remembered digest is used only while the study still holds that part, so a freeze that
was rolled back, or a study deleted and its id used again (its creation time is part of the
key), builds the node afresh. tests/services/record/test_freeze_parts.py checks, for every
kind of change, that the manifest equals the one a whole build gives.
"""

import hashlib
from collections import defaultdict
from dataclasses import dataclass
from threading import Lock
from typing import Any

from sqlalchemy import String, func, type_coerce
from sqlalchemy import select as select_columns
from sqlmodel import Session, col

from app.db.models import Deviation, Node, Safeguard, Scenario, SeverityCategory, Step
from app.db.queries import fetch_plain_rows
from app.db.snapshot_parts import NodesMovedError, split_snapshot, split_with_known_nodes
from app.db.snapshot_store import held_digests, store_parts
from app.services.exchange.study_file import export_study
from app.services.study.tree import get_study

# Any in this module: plain rows from SQLAlchemy carry no column types.

# (study id, study created at, node fingerprint) -> the node part's digest. Bounded: a
# process freezing many large studies forgets all and starts again (a miss only rebuilds).
_REMEMBERED: dict[tuple[int, str, str], str] = {}
_REMEMBERED_LIMIT = 200_000
_LOCK = Lock()


@dataclass(frozen=True)
class NodePrint:
    """One node of the study in order: its id, fingerprint and scenarios before it."""

    node_id: int
    fingerprint: str
    scenarios_before: int


def _summary(model: Any) -> tuple[Any, ...]:
    """What a node's rows of `model` add up to: how many, their ids and versions summed, and
    the latest change (as stored text: no datetime is built)."""
    table: Any = model
    return (func.count(table.id), func.sum(table.id), func.sum(table.version),
            func.max(type_coerce(table.updated_at, String)))


def _summaries_by_node(session: Session, study_id: int) -> dict[int, list[tuple[Any, ...]]]:
    """Per node, the summary of its deviations, scenarios, steps and safeguards: one grouped
    SELECT each, a row per node (the rows themselves stay in the database)."""
    by_node: dict[int, list[tuple[Any, ...]]] = defaultdict(list)
    node_of = col(Deviation.node_id)
    statements: dict[str, Any] = {
        "d": select_columns(node_of, *_summary(Deviation)).where(
            col(Deviation.study_id) == study_id),
        "s": select_columns(node_of, *_summary(Scenario)).join(
            Deviation, col(Deviation.id) == col(Scenario.deviation_id)).where(
            col(Scenario.study_id) == study_id),
    }
    for name, model in (("t", Step), ("g", Safeguard)):
        table: Any = model
        statements[name] = select_columns(node_of, *_summary(model)).join(
            Scenario, col(Scenario.id) == table.scenario_id).join(
            Deviation, col(Deviation.id) == col(Scenario.deviation_id)).where(
            table.study_id == study_id)
    for name, statement in statements.items():
        for row in fetch_plain_rows(session, statement.group_by(node_of)):
            node_id, *summary = tuple(row)
            by_node[node_id].append((name, *summary))
    return by_node


def node_prints(session: Session, study_id: int) -> list[NodePrint]:
    """Each node's fingerprint, in the study's order."""
    criteria = [tuple(row) for row in fetch_plain_rows(session, select_columns(
        col(SeverityCategory.id), col(SeverityCategory.version),
        type_coerce(SeverityCategory.updated_at, String)).where(
        col(SeverityCategory.study_id) == study_id).order_by(
        col(SeverityCategory.position), col(SeverityCategory.id)))]
    nodes = fetch_plain_rows(session, select_columns(
        col(Node.id), col(Node.version), type_coerce(Node.updated_at, String)).where(
        col(Node.study_id) == study_id).order_by(col(Node.position), col(Node.id)))
    by_node = _summaries_by_node(session, study_id)
    prints, before = [], 0
    for node in nodes:
        summaries = sorted(by_node.get(node[0], []))
        digest = hashlib.sha256(repr((criteria, tuple(node), summaries)).encode("utf-8"))
        prints.append(NodePrint(node[0], digest.hexdigest(), before))
        before += next((int(row[1]) for row in summaries if row[0] == "s"), 0)
    return prints


def freeze_snapshot(session: Session, study_id: int) -> str:
    """Store the study's snapshot as parts, building only nodes not remembered; its
    manifest as JSON (Revision.snapshot_parts). Flushes nothing else, does not commit."""
    study = get_study(session, study_id)
    key = (study_id, study.created_at.isoformat())
    prints = node_prints(session, study_id)
    with _LOCK:
        remembered = {p.node_id: _REMEMBERED.get((*key, p.fingerprint)) for p in prints}
    still_held = held_digests(session, study_id, [d for d in remembered.values() if d])
    known = {node_id: d if d in still_held else None for node_id, d in remembered.items()}
    to_build = [p.node_id for p in prints if known[p.node_id] is None]
    snapshot = export_study(session, study_id, with_history=False,  # all: the whole build
                            node_ids=None if len(to_build) == len(prints) else to_build)
    try:
        manifest, parts = split_with_known_nodes(
            snapshot, [(known[p.node_id], p.scenarios_before) for p in prints])
    except NodesMovedError:  # a node added or deleted between the reads (PostgreSQL's READ
        # COMMITTED reads each statement afresh): the whole study, remembering nothing
        return store_parts(session, study_id, *split_snapshot(
            export_study(session, study_id, with_history=False)))
    _remember(key, prints, manifest["nodes"])
    return store_parts(session, study_id, manifest, parts)


def _remember(key: tuple[int, str], prints: list[NodePrint], digests: Any) -> None:
    with _LOCK:
        if len(_REMEMBERED) + len(prints) > _REMEMBERED_LIMIT:
            _REMEMBERED.clear()
        for node_print, digest in zip(prints, digests, strict=True):
            _REMEMBERED[(*key, node_print.fingerprint)] = digest


def forget_all() -> None:
    """Forget every remembered node (tests: a freeze then builds the whole study)."""
    with _LOCK:
        _REMEMBERED.clear()
