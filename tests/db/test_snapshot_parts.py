"""Revision snapshots as content-addressed parts: split and put back exactly, shared between
revisions when a node did not change, and converted from whole snapshots by the migration."""

import hashlib
import json
import sqlite3
from pathlib import Path
from typing import Any

import pytest
from alembic import command
from sqlmodel import Session, select

from app.cli import alembic_config
from app.db.models import Revision, SnapshotPart
from app.db.session import build_db_engine
from app.db.snapshot_parts import assemble_snapshot, split_snapshot
from app.db.snapshot_store import load_snapshot
from app.demo import DEMO_STUDY_PATH
from tests.scratch_db import settings_pointing_at, sqlite_url

BEFORE = "3c8d0f1e6a52"  # the head before revision snapshots were split into parts


def _snapshot(first_node_scenarios: int) -> dict[str, Any]:
    """A snapshot shaped as the study file writes it: scenario refs S1, S2, ... across nodes,
    ref first in each scenario; the second node also holds a scenario named otherwise."""
    first = [{"ref": f"S{i + 1}", "cause": f"cause {i}"} for i in range(first_node_scenarios)]
    second = [{"ref": f"S{first_node_scenarios + 1}", "cause": "drain left open"},
              {"ref": "S-imported", "cause": "named by another file"}]
    return {"format": "tallyroom-study", "schema_version": 2,
            "nodes": [{"number": "1", "deviations": [{"guideword": "More", "scenarios": first}]},
                      {"number": "2", "deviations": [{"guideword": "Less", "scenarios": second}]}],
            "recommendations": [{"text": "Check", "scenarios": ["S1"]}]}


def _put_back(manifest: Any, parts: dict[str, str]) -> dict[str, Any]:
    return assemble_snapshot(manifest, lambda digest: json.loads(parts[digest]))


def test_a_snapshot_split_into_parts_is_put_back_key_for_key_in_order() -> None:
    snapshot = _snapshot(2)
    manifest, parts = split_snapshot(snapshot)
    assert json.dumps(_put_back(manifest, parts)) == json.dumps(snapshot)  # order kept
    assert list(manifest) == list(snapshot)
    for digest, text in parts.items():  # keyed by hashlib's SHA-256 of the UTF-8 text
        assert digest == hashlib.sha256(text.encode("utf-8")).hexdigest()


def test_a_scenario_added_to_the_first_node_leaves_the_later_nodes_part_shared() -> None:
    before, _ = split_snapshot(_snapshot(2))
    after, parts = split_snapshot(_snapshot(3))  # S3 added: node 2's refs become S4, ...
    assert before["nodes"][1] == after["nodes"][1]
    assert before["nodes"][0] != after["nodes"][0]
    second = json.loads(parts[after["nodes"][1]])["deviations"][0]["scenarios"]
    assert second == [{"cause": "drain left open"},  # sequential: given back on reading
                      {"ref": "S-imported", "cause": "named by another file"}]
    assert _put_back(after, parts)["nodes"][1]["deviations"][0]["scenarios"][0]["ref"] == "S4"


def test_an_empty_study_keeps_its_empty_node_list() -> None:
    snapshot = {"format": "tallyroom-study", "nodes": []}
    manifest, parts = split_snapshot(snapshot)
    assert manifest["nodes"] == [] and _put_back(manifest, parts) == snapshot


def _demo_snapshots() -> tuple[dict[str, Any], dict[str, Any]]:
    """Two whole snapshots as stored before: the demo study file, then one cause reworded."""
    data = json.loads(DEMO_STUDY_PATH.read_text(encoding="utf-8"))
    first = {k: v for k, v in data.items() if k not in ("change_log", "revisions")}
    second = json.loads(json.dumps(first))
    second["nodes"][-1]["deviations"][0]["scenarios"][0]["cause"] += " (reworded)"
    return first, second


def _write_study_with_two_revisions(path: Path, snapshots: list[dict[str, Any]]) -> None:
    """A study and two revisions with whole snapshots, in the old revision's columns."""
    now = "2026-12-01 00:00:00"
    with sqlite3.connect(path) as raw:
        study_id = raw.execute(
            "INSERT INTO study (version, created_at, updated_at, title, facility, scope, "
            "revision_label, frequency_unit, criteria_basis, invented) VALUES "
            "(1, ?, ?, 'Old study', '', '', 'Draft', 'per year', '', 1)", (now, now)).lastrowid
        for label, snapshot in zip(("Rev A", "Rev B"), snapshots, strict=True):
            raw.execute("INSERT INTO revision (study_id, label, note, frozen_at, frozen_by, "
                        "signed_off_by, snapshot) VALUES (?, ?, '', ?, 'T', 'I. M.', ?)",
                        (study_id, label, now, json.dumps(snapshot)))


def test_the_migration_splits_every_stored_snapshot_into_shared_parts(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = tmp_path / "before.db"
    snapshots = list(_demo_snapshots())
    with settings_pointing_at(sqlite_url(path), monkeypatch):
        command.upgrade(alembic_config(), BEFORE)
        _write_study_with_two_revisions(path, snapshots)
        command.upgrade(alembic_config(), "head")
    engine = build_db_engine(sqlite_url(path))
    with Session(engine) as session:
        revisions = session.exec(select(Revision).order_by(Revision.id)).all()  # type: ignore[arg-type]
        assert [load_snapshot(session, r) for r in revisions] == snapshots
        assert [json.loads(r.snapshot) for r in revisions] == snapshots
        parts = session.exec(select(SnapshotPart)).all()
    engine.dispose()
    # Rev B shares every part but its changed node: one part more than Rev A's.
    first, _ = split_snapshot(snapshots[0])
    assert len(parts) == len({*first["nodes"], *[d for k, d in first.items() if k != "nodes"]}) + 1
    with sqlite3.connect(path) as raw:
        assert raw.execute("PRAGMA foreign_key_check").fetchall() == []
        schema = raw.execute("SELECT sql FROM sqlite_master WHERE name = 'revision'").fetchone()
        assert "AUTOINCREMENT" in schema[0] and "snapshot_parts" in schema[0]


def test_downgrading_puts_every_whole_snapshot_back(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = tmp_path / "before.db"
    snapshots = list(_demo_snapshots())
    with settings_pointing_at(sqlite_url(path), monkeypatch):
        command.upgrade(alembic_config(), BEFORE)
        _write_study_with_two_revisions(path, snapshots)
        command.upgrade(alembic_config(), "head")
        command.downgrade(alembic_config(), BEFORE)
    with sqlite3.connect(path) as raw:
        stored = raw.execute("SELECT snapshot FROM revision ORDER BY id").fetchall()
        tables = {r[0] for r in raw.execute("SELECT name FROM sqlite_master WHERE type='table'")}
    assert [json.loads(text) for (text,) in stored] == snapshots
    assert "snapshot_part" not in tables

