"""Revisions store their snapshots as shared parts: a second freeze writes only what changed,
and a study file carries each part once, imports back with the same revisions and the same
comparisons, and is refused when a part is missing or does not match its digest."""

import json
from typing import Any

import pytest
from sqlmodel import Session, col, func, select

from app.db.models import Deviation, Node, Revision, Scenario, SnapshotPart, Step, Study
from app.db.queries import fetch_rows_of_study
from app.db.snapshot_parts import part_digest, part_text
from app.db.snapshot_store import load_snapshot, revision_manifest
from app.services.exchange.study_file import StudyFileError, export_study
from app.services.exchange.study_import import import_study_text
from app.services.record.revisions import (
    build_comparison_page,
    freeze_revision,
    read_frozen,
)
from tests.helpers import TEST_AUTHOR
from tests.samples import free_the_title

Data = dict[str, Any]


def _freeze(session: Session, study_id: int, label: str) -> Revision:
    return freeze_revision(session=session, study_id=study_id, frozen_by=TEST_AUTHOR,
                           values={"label": label, "signed_off_by": "I. M."})


def _part_count(session: Session, study_id: int) -> int:
    return session.exec(select(func.count()).select_from(SnapshotPart).where(
        SnapshotPart.study_id == study_id)).one()


def _step_of_last_node(session: Session, study_id: int) -> Step:
    """A step of the study's last node, so the nodes before it stay as they were."""
    last_node = fetch_rows_of_study(session, Node, study_id)[-1]
    return session.exec(select(Step).join(Scenario).join(Deviation).where(
        Deviation.node_id == last_node.id)).first() or pytest.fail("the last node has no step")


def _halve(session: Session, step: Step) -> None:
    step.value = step.value / 2
    step.value_text = ""
    session.add(step)
    session.commit()


def _two_revisions(session: Session, study: Study) -> tuple[Revision, Revision]:
    """Rev A, then one step of the last node halved, then Rev B."""
    study_id = study.id or 0
    first = _freeze(session, study_id, "Rev A")
    _halve(session, _step_of_last_node(session, study_id))
    return first, _freeze(session, study_id, "Rev B")


def test_a_revision_reads_back_exactly_the_study_file_it_froze(
        session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    frozen = _freeze(session, study_id, "Rev A")
    assert load_snapshot(session, frozen) == export_study(session, study_id, with_history=False)
    assert json.loads(frozen.snapshot) == load_snapshot(session, frozen)


def test_freezing_an_unchanged_study_again_writes_no_part(
        session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    first = _freeze(session, study_id, "Rev A")
    count = _part_count(session, study_id)
    second = _freeze(session, study_id, "Rev B")
    assert _part_count(session, study_id) == count
    assert second.snapshot_parts == first.snapshot_parts


def test_a_second_freeze_with_one_node_changed_writes_only_that_nodes_part(
        session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    first = _freeze(session, study_id, "Rev A")
    count = _part_count(session, study_id)
    _halve(session, _step_of_last_node(session, study_id))
    second = _freeze(session, study_id, "Rev B")
    before, after = revision_manifest(first), revision_manifest(second)
    assert len(before["nodes"]) >= 2  # the demo has nodes that did not change
    changed = [key for key in before if before[key] != after[key]]
    assert changed == ["nodes"]
    assert before["nodes"][:-1] == after["nodes"][:-1]
    assert before["nodes"][-1] != after["nodes"][-1]
    assert _part_count(session, study_id) == count + 1
    new_part = session.get(SnapshotPart, (study_id, after["nodes"][-1]))
    assert new_part is not None
    assert part_digest(new_part.content) == new_part.digest  # keyed by its own SHA-256


def _comparison(session: Session, study_id: int) -> list[tuple[str, str, str, str, str]]:
    older, newer = sorted(session.exec(select(Revision).where(
        Revision.study_id == study_id)).all(), key=lambda r: r.id or 0)
    diff = build_comparison_page(session=session, study_id=study_id, typed_from=str(older.id),
                                 typed_to=str(newer.id)).diff
    assert diff is not None
    return [(c.kind, c.where, c.field, c.before, c.after) for c in diff.changes]


def test_export_then_import_gives_the_same_revisions_and_comparisons(
        session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    _two_revisions(session, demo_study)
    data = export_study(session, study_id)
    nodes = len(data["nodes"])
    # Each node of the two revisions once, plus the one changed node, plus the study parts.
    node_parts = {d for r in data["revisions"] for d in r["snapshot_from_parts"]["nodes"]}
    assert len(node_parts) == nodes + 1
    assert all("snapshot" not in r for r in data["revisions"])
    # Rev B is the study as it stands: the file's own content holds all of its parts, so the
    # file carries only the one node part Rev A had before the change.
    rev_a_nodes = data["revisions"][0]["snapshot_from_parts"]["nodes"]
    assert list(data["snapshot_parts"]) == [rev_a_nodes[-1]]
    compared = _comparison(session, study_id)
    assert [c[2] for c in compared if c[0] == "changed"] == ["value"]
    free_the_title(session, demo_study)
    copy_id = import_study_text(session, json.dumps(data)).id or 0
    assert _comparison(session, copy_id) == compared
    for label in ("Rev A", "Rev B"):
        original, copied = (_revision(session, study, label) for study in (study_id, copy_id))
        assert load_snapshot(session, copied) == load_snapshot(session, original)
        assert (read_frozen(session=session, study_id=copy_id, revision_id=copied.id or 0).nodes
                == read_frozen(session=session, study_id=study_id,
                               revision_id=original.id or 0).nodes)
    assert export_study(session, copy_id)["snapshot_parts"] == data["snapshot_parts"]


def _revision(session: Session, study_id: int, label: str) -> Revision:
    return session.exec(select(Revision).where(Revision.study_id == study_id,
                                               col(Revision.label) == label)).one()


def _refused(session: Session, data: Data) -> str:
    studies = session.exec(select(func.count()).select_from(Study)).one()
    with pytest.raises(StudyFileError) as refusal:
        import_study_text(session, json.dumps(data))
    assert session.exec(select(func.count()).select_from(Study)).one() == studies
    return str(refusal.value)


def test_a_file_naming_a_part_it_does_not_hold_is_refused(
        session: Session, demo_study: Study) -> None:
    _two_revisions(session, demo_study)
    data = export_study(session, demo_study.id or 0)
    missing = data["revisions"][0]["snapshot_from_parts"]["nodes"][-1]
    del data["snapshot_parts"][missing]
    message = _refused(session, data)
    assert f"revisions.0.snapshot_from_parts: part {missing} is not in the file" in message
    assert RULE in message


RULE = ("every part a revision names must be in the file: in snapshot_parts, or the study's "
        "own content unchanged")


def test_a_file_whose_study_content_changed_under_its_revisions_is_refused(
        session: Session, demo_study: Study) -> None:
    _two_revisions(session, demo_study)
    data = export_study(session, demo_study.id or 0)
    data["study"]["facility"] = "Quietly changed"  # Rev A and Rev B name the header as it was
    header = data["revisions"][1]["snapshot_from_parts"]["study"]
    message = _refused(session, data)
    assert f"revisions.0.snapshot_from_parts: part {header} is not in the file" in message
    assert RULE in message


def test_a_part_changed_after_the_file_was_written_is_refused(
        session: Session, demo_study: Study) -> None:
    _two_revisions(session, demo_study)
    data = export_study(session, demo_study.id or 0)
    digest = data["revisions"][0]["snapshot_from_parts"]["nodes"][-1]
    data["snapshot_parts"][digest]["name"] = "Quietly renamed"
    actual = part_digest(part_text(data["snapshot_parts"][digest]))
    message = _refused(session, data)
    assert f"snapshot_parts.{digest}: the part's content hashes to {actual}" in message
    assert "a part's key must be the SHA-256 of its compact JSON text" in message


@pytest.mark.parametrize(("spoil", "rule"), [
    (lambda r: r.update(snapshot={}), "a revision has either a snapshot or snapshot_from_parts"),
    (lambda r: r["snapshot_from_parts"].update(study="not-a-digest"),
     "revisions.0.snapshot_from_parts.study: each part is named by its SHA-256 digest"),
    (lambda r: r.pop("snapshot_from_parts"),
     "a revision has either a snapshot or snapshot_from_parts"),
])
def test_a_revision_with_a_malformed_part_list_is_refused(
        session: Session, demo_study: Study, spoil: Any, rule: str) -> None:
    _freeze(session, demo_study.id or 0, "Rev A")
    data = export_study(session, demo_study.id or 0)
    spoil(data["revisions"][0])
    assert rule in _refused(session, data)


def test_a_snapshot_read_from_a_file_shares_nothing_with_the_study_content(
        session: Session, demo_study: Study) -> None:
    from app.services.exchange.study_file_revisions import expand_revision_parts

    _two_revisions(session, demo_study)
    data = expand_revision_parts(export_study(session, demo_study.id or 0))
    title = data["study"]["title"]
    data["study"]["title"] = "Changed in the live content only"
    data["nodes"][0]["name"] = "Changed in the live content only"
    assert [r["snapshot"]["study"]["title"] for r in data["revisions"]] == [title, title]
    assert all(r["snapshot"]["nodes"][0]["name"] != "Changed in the live content only"
               for r in data["revisions"])
