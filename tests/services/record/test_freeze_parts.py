"""A freeze builds only the nodes changed since this process last froze the study, and its
manifest is always the one a whole build of the study gives, whatever kind of change came
between the two freezes."""

from collections.abc import Callable
from typing import Any

import pytest
from sqlmodel import Session, col, select

from app.db.models import (
    Deviation,
    Node,
    Revision,
    Safeguard,
    Scenario,
    SeverityCategory,
    Step,
    Study,
)
from app.db.queries import fetch_rows_of_study
from app.db.snapshot_parts import split_snapshot
from app.db.snapshot_store import load_snapshot, revision_manifest
from app.likelihood.types import StepKind
from app.services.exchange.study_file import export_study
from app.services.record import freeze_parts
from app.services.record.revisions import freeze_revision
from tests.helpers import TEST_AUTHOR

Change = Callable[[Session, int], set[int] | None]
Data = dict[str, Any]  # the nodes it changes (None: every node)


def _nodes(session: Session, study_id: int) -> list[Node]:
    return fetch_rows_of_study(session, Node, study_id)


def _node_of(session: Session, scenario: Scenario) -> int:
    deviation = session.get(Deviation, scenario.deviation_id)
    assert deviation is not None
    return deviation.node_id


def _scenarios(session: Session, node_id: int) -> list[Scenario]:
    return list(session.exec(select(Scenario).join(Deviation).where(
        Deviation.node_id == node_id).order_by(col(Scenario.id))).all())


def _last_scenario(session: Session, study_id: int) -> Scenario:
    return _scenarios(session, _nodes(session, study_id)[-1].id or 0)[-1]


def _save(session: Session, *rows: Any) -> None:
    for row in rows:
        session.add(row)
    session.commit()


def _step_value(session: Session, study_id: int) -> set[int]:
    scenario = _last_scenario(session, study_id)
    step = session.exec(select(Step).where(Step.scenario_id == scenario.id,
                                           col(Step.value).is_not(None))).first()
    assert step is not None and step.value is not None
    step.value, step.value_text = step.value / 2, ""
    _save(session, step)
    return {_node_of(session, scenario)}


def _step_added(session: Session, study_id: int) -> set[int]:
    scenario = _last_scenario(session, study_id)
    _save(session, Step(study_id=study_id, scenario_id=scenario.id or 0, kind=StepKind.IPL,
                        description="Added layer", value=0.1, position=99))
    return {_node_of(session, scenario)}


def _step_deleted(session: Session, study_id: int) -> set[int]:
    scenario = _last_scenario(session, study_id)
    step = session.exec(select(Step).where(Step.scenario_id == scenario.id).order_by(
        col(Step.position).desc())).first()
    assert step is not None
    session.delete(step)
    session.commit()
    return {_node_of(session, scenario)}


def _safeguard_edited_or_added(session: Session, study_id: int) -> set[int]:
    scenario = _last_scenario(session, study_id)
    found = session.exec(select(Safeguard).where(Safeguard.scenario_id == scenario.id)).first()
    if found is None:
        found = Safeguard(study_id=study_id, scenario_id=scenario.id or 0, description="New")
    found.note = "Changed note"
    _save(session, found)
    return {_node_of(session, scenario)}


def _cause(session: Session, study_id: int) -> set[int]:
    scenario = _scenarios(session, _nodes(session, study_id)[0].id or 0)[0]
    scenario.cause = "A different cause"
    _save(session, scenario)
    return {_node_of(session, scenario)}


def _rating(session: Session, study_id: int) -> set[int]:
    scenario = _last_scenario(session, study_id)
    others = [c for c in fetch_rows_of_study(session, SeverityCategory, study_id)
              if c.id != scenario.severity_category_id and str(c.receptor) == "people"]
    scenario.severity_category_id = others[0].id
    _save(session, scenario)
    return {_node_of(session, scenario)}


def _scenario_added_to_first_node(session: Session, study_id: int) -> set[int]:
    first = _nodes(session, study_id)[0]
    deviation = fetch_rows_of_study(session, Deviation, study_id)[0]
    assert deviation.node_id == first.id
    _save(session, Scenario(study_id=study_id, deviation_id=deviation.id or 0,
                            cause="Added cause", position=99))
    return {first.id or 0}  # later nodes' refs move, their parts do not


def _scenario_moved_within_node(session: Session, study_id: int) -> set[int]:
    node = _nodes(session, study_id)[0]
    deviations = [d for d in fetch_rows_of_study(session, Deviation, study_id)
                  if d.node_id == node.id]
    if len(deviations) < 2:
        deviations.append(Deviation(study_id=study_id, node_id=node.id or 0,
                                    guideword="Less", parameter="Flow", position=9))
        _save(session, deviations[-1])
    scenario = _scenarios(session, node.id or 0)[0]
    target = next(d for d in deviations if d.id != scenario.deviation_id)
    scenario.deviation_id = target.id or 0
    _save(session, scenario)
    return {node.id or 0}


def _deviation_renamed(session: Session, study_id: int) -> set[int]:
    deviation = fetch_rows_of_study(session, Deviation, study_id)[-1]
    deviation.description = "Renamed deviation"
    _save(session, deviation)
    return {deviation.node_id}


def _deviation_deleted(session: Session, study_id: int) -> set[int]:
    deviation = fetch_rows_of_study(session, Deviation, study_id)[-1]
    node_id = deviation.node_id
    session.delete(deviation)
    session.commit()
    return {node_id}


def _node_renamed(session: Session, study_id: int) -> set[int]:
    node = _nodes(session, study_id)[0]
    node.design_intent = "A new intent"
    _save(session, node)
    return {node.id or 0}


def _node_added(session: Session, study_id: int) -> set[int]:
    node = Node(study_id=study_id, number="99", name="Added node", position=99)
    _save(session, node)
    return {node.id or 0}


def _node_deleted(session: Session, study_id: int) -> set[int]:
    session.delete(_nodes(session, study_id)[-1])
    session.commit()
    return set()


def _nodes_reordered(session: Session, study_id: int) -> set[int]:
    nodes = _nodes(session, study_id)
    moved = set()
    for position, node in enumerate(reversed(nodes)):
        if node.position != position:
            node.position = position
            moved.add(node.id or 0)
    _save(session, *nodes)
    # No part changes, but a moved node's row did (its position): it is built again, which
    # costs time, never correctness. The manifest lists them in the new order.
    return moved


def _criteria_reordered(session: Session, study_id: int) -> None:
    categories = fetch_rows_of_study(session, SeverityCategory, study_id)
    for position, category in enumerate(reversed(categories)):
        category.position = position
    _save(session, *categories)
    return None  # every scenario's rating ref (C1, C2, ...) may move: every node is built


def _category_renamed(session: Session, study_id: int) -> None:
    category = fetch_rows_of_study(session, SeverityCategory, study_id)[0]
    category.name = "Renamed category"
    _save(session, category)
    # Only the criteria part changes, but any change to a category builds every node: a
    # deleted one clears ratings in the database (ON DELETE SET NULL), raising no version.
    return None


def _category_deleted(session: Session, study_id: int) -> None:
    rated = session.exec(select(Scenario).where(Scenario.study_id == study_id, col(
        Scenario.environment_category_id).is_not(None))).first()
    assert rated is not None  # the demo rates some scenario's environment
    category = session.get(SeverityCategory, rated.environment_category_id)
    session.delete(category)
    session.commit()  # the database clears the ratings (ON DELETE SET NULL), no version moves
    session.expire_all()
    assert session.get(Scenario, rated.id).environment_category_id is None  # type: ignore[union-attr]
    return None


def _header(session: Session, study_id: int) -> set[int]:
    study = session.get(Study, study_id)
    assert study is not None
    study.scope = "A changed scope"
    _save(session, study)
    return set()


CHANGES: dict[str, Change] = {
    "a step's value": _step_value, "a step added": _step_added, "a step deleted": _step_deleted,
    "a safeguard": _safeguard_edited_or_added, "a scenario's cause": _cause,
    "a scenario's rating": _rating, "a scenario added": _scenario_added_to_first_node,
    "a scenario moved": _scenario_moved_within_node, "a deviation": _deviation_renamed,
    "a deviation deleted": _deviation_deleted, "a node": _node_renamed,
    "a node added": _node_added, "a node deleted": _node_deleted,
    "nodes reordered": _nodes_reordered, "criteria reordered": _criteria_reordered,
    "a category renamed": _category_renamed, "a category deleted": _category_deleted,
    "the header": _header,
}


def _freeze(session: Session, study_id: int, label: str) -> Revision:
    return freeze_revision(session=session, study_id=study_id, frozen_by=TEST_AUTHOR,
                           values={"label": label, "signed_off_by": "I. M."})


@pytest.fixture
def built(monkeypatch: pytest.MonkeyPatch) -> list[set[int] | None]:
    """The node ids each freeze built (all of them when it built the whole study)."""
    calls: list[set[int] | None] = []
    real = export_study

    def spy(session: Session, study_id: int, **options: Any) -> dict[str, Any]:
        node_ids = options.get("node_ids")
        calls.append({n.id or 0 for n in _nodes(session, study_id)} if node_ids is None
                     else set(node_ids))
        return real(session, study_id, **options)

    monkeypatch.setattr(freeze_parts, "export_study", spy)
    freeze_parts.forget_all()
    return calls


@pytest.mark.parametrize("change", CHANGES.values(), ids=CHANGES.keys())
def test_a_second_freeze_builds_only_the_changed_nodes_and_equals_a_whole_build(
        session: Session, demo_study: Study, built: list[set[int] | None],
        change: Change) -> None:
    study_id = demo_study.id or 0
    all_nodes = {n.id or 0 for n in _nodes(session, study_id)}
    _freeze(session, study_id, "Rev A")
    assert built == [all_nodes]  # nothing remembered yet: every node is built
    changed = change(session, study_id)
    second = _freeze(session, study_id, "Rev B")
    whole = export_study(session, study_id, with_history=False)
    assert revision_manifest(second) == split_snapshot(whole)[0]
    assert load_snapshot(session, second) == whole
    expected = {n.id or 0 for n in _nodes(session, study_id)} if changed is None else changed
    assert built[1] == expected


def test_an_unchanged_study_freezes_without_building_a_node(
        session: Session, demo_study: Study, built: list[set[int] | None]) -> None:
    study_id = demo_study.id or 0
    first = _freeze(session, study_id, "Rev A")
    second = _freeze(session, study_id, "Rev B")
    assert built[1] == set()
    assert second.snapshot_parts == first.snapshot_parts


def test_a_rolled_back_freeze_leaves_nothing_remembered_that_is_not_stored(
        session: Session, demo_study: Study, built: list[set[int] | None]) -> None:
    study_id = demo_study.id or 0
    freeze_parts.freeze_snapshot(session, study_id)
    session.rollback()  # the parts were never committed, though their digests are remembered
    revision = _freeze(session, study_id, "Rev A")
    assert built[1] == {n.id or 0 for n in _nodes(session, study_id)}
    assert load_snapshot(session, revision) == export_study(session, study_id,
                                                            with_history=False)


def _freeze_with_a_change_between_the_reads(
        session: Session, study_id: int, monkeypatch: pytest.MonkeyPatch,
        change: Callable[[], None]) -> tuple[Revision, Data]:
    """Freeze with `change` made (and flushed) right after the fingerprints are read, as
    another save can land there on PostgreSQL (READ COMMITTED reads each statement afresh).
    The manifest a whole build gave just before the change comes back too."""
    real = freeze_parts.node_prints
    before: Data = {}

    def prints_then_change(session: Session, study_id: int) -> list[freeze_parts.NodePrint]:
        prints = real(session, study_id)
        before.update(split_snapshot(export_study(session, study_id, with_history=False))[0])
        change()
        session.flush()
        return prints

    monkeypatch.setattr(freeze_parts, "node_prints", prints_then_change)
    return _freeze(session, study_id, "Rev B"), before


def test_a_node_deleted_between_the_reads_that_was_to_be_built_gives_the_whole_study(
        session: Session, demo_study: Study, monkeypatch: pytest.MonkeyPatch) -> None:
    study_id = demo_study.id or 0
    _freeze(session, study_id, "Rev A")
    (changed,) = _step_value(session, study_id)  # the last node: the one the freeze builds
    node = session.get(Node, changed)
    second, _ = _freeze_with_a_change_between_the_reads(
        session, study_id, monkeypatch, lambda: session.delete(node))
    whole = export_study(session, study_id, with_history=False)
    assert revision_manifest(second) == split_snapshot(whole)[0]
    assert load_snapshot(session, second) == whole


def test_a_node_added_between_the_reads_is_not_in_the_revision_frozen_before_it(
        session: Session, demo_study: Study, monkeypatch: pytest.MonkeyPatch) -> None:
    study_id = demo_study.id or 0
    _freeze(session, study_id, "Rev A")
    _step_value(session, study_id)
    second, before = _freeze_with_a_change_between_the_reads(
        session, study_id, monkeypatch, lambda: session.add(Node(
            study_id=study_id, number="98", name="Added meanwhile", position=98)))
    # The study's nodes as the fingerprints read them: the freeze is the earlier save.
    assert revision_manifest(second) == before
