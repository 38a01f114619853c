"""Every editable row is versioned and every content change is logged."""

import pytest
from sqlalchemy.exc import IntegrityError
from sqlmodel import Session, select

from app.db.models import (
    ChangeLogEntry,
    Deviation,
    Node,
    Revision,
    Scenario,
    Step,
    Study,
    text_limit,
)
from app.db.tracking import COALESCE_WINDOW
from app.likelihood.types import StepKind
from tests.factories import make_scenario_tree, make_step
from tests.helpers import TEST_AUTHOR


def _log(session: Session) -> list[ChangeLogEntry]:
    return list(session.exec(select(ChangeLogEntry).order_by(ChangeLogEntry.id)).all())


def test_an_edit_bumps_the_version_and_the_timestamp(session: Session) -> None:
    scenario = make_scenario_tree(session)
    before = (scenario.version, scenario.updated_at)
    scenario.cause = "Operator opens the wrong valve"
    session.commit()
    session.refresh(scenario)
    assert scenario.version == before[0] + 1
    assert scenario.updated_at >= before[1]


def test_an_edit_is_logged_with_author_old_and_new_value(session: Session) -> None:
    scenario = make_scenario_tree(session)
    scenario.consequence = "Toxic release"
    session.commit()
    edit = _log(session)[-1]
    assert (edit.action, edit.entity, edit.field) == ("edit", "scenario", "consequence")
    assert (edit.old_value, edit.new_value) == ("Overfill and spill", "Toxic release")
    assert edit.author == TEST_AUTHOR
    assert edit.scenario_id == scenario.id


def test_quick_successive_edits_of_one_field_fold_into_one_entry(session: Session) -> None:
    scenario = make_scenario_tree(session)
    step = make_step(session, scenario, value=0.1)
    for value in (0.05, 0.01):
        step.value = value
        session.commit()
    edits = [e for e in _log(session) if e.action == "edit" and e.field == "value"]
    assert [(e.old_value, e.new_value) for e in edits] == [("0.1", "0.01")]
    assert COALESCE_WINDOW.total_seconds() == 60


def test_folding_follows_each_field_when_one_save_changes_two(session: Session) -> None:
    scenario = make_scenario_tree(session)
    step = make_step(session, scenario, value=0.1, value_text="0.1")
    for value, words in ((0.05, "1 in 20"), (0.01, "1 in 100")):
        step.value, step.value_text = value, words
        session.commit()
    edits = [(e.field, e.old_value, e.new_value) for e in _log(session) if e.action == "edit"]
    assert sorted(edits) == [("value", "0.1", "0.01"), ("value_text", "0.1", "1 in 100")]


def test_creates_and_deletes_are_logged(session: Session) -> None:
    scenario = make_scenario_tree(session)
    step = make_step(session, scenario)
    session.delete(step)
    session.commit()
    actions = [(e.action, e.entity) for e in _log(session)]
    assert ("create", "step") in actions
    assert actions[-1] == ("delete", "step")


def test_deleting_a_node_cascades_to_its_whole_subtree(session: Session) -> None:
    scenario = make_scenario_tree(session)
    make_step(session, scenario)
    node = session.get(Node, session.get(Deviation, scenario.deviation_id).node_id)
    session.delete(node)
    session.commit()
    assert session.exec(select(Scenario)).all() == []
    assert session.exec(select(Step)).all() == []


def test_the_database_refuses_a_second_initiating_event(session: Session) -> None:
    scenario = make_scenario_tree(session)
    with pytest.raises(IntegrityError):
        make_step(session, scenario, kind=StepKind.INITIATING_EVENT, value=1.0)


def test_text_limits_come_from_the_columns_the_database_enforces() -> None:
    assert text_limit(Scenario, "cause") == 2000
    assert text_limit(Study, "title") == 200
    with pytest.raises(ValueError, match="has no length limit"):
        text_limit(Revision, "snapshot_parts")
