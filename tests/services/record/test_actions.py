"""The actions service: the contract other areas call."""

from datetime import date

import pytest
from sqlmodel import Session, select

from app.db.models import ActionStatus, ChangeLogEntry, RecommendationScenario, Study
from app.services.record.actions import (
    ActionInputError,
    actions_of_scenario,
    add_action,
    link_scenario,
    list_actions,
    remove_action,
    save_action,
    unlink_scenario,
)
from app.services.study.tree import NotFoundError
from tests.factories import make_deviation, make_node, make_scenario, make_scenario_tree

TODAY = date(2026, 12, 1)


def test_an_action_is_created_open_and_linked_to_its_scenarios(session: Session) -> None:
    scenario = make_scenario_tree(session)
    action = add_action(session=session, study_id=scenario.study_id, text=" Add a trip ",
                           owner="D. Achterberg", due_date="2027-03-31",
                           scenario_ids=[scenario.id], expected_rrf="1,000")
    assert (action.text, action.status, action.due_date, action.expected_rrf) == (
        "Add a trip", ActionStatus.OPEN, date(2027, 3, 31), 1000.0)
    assert [a.id for a in actions_of_scenario(session=session, scenario_id=scenario.id)] == [
        action.id]


@pytest.mark.parametrize(
    ("changes", "field", "rule"),
    [
        ({"status": "closed"}, "status", "must be one of open, in_progress, done, rejected"),
        ({"status": "rejected"}, "status_reason", "a rejected action needs a reason"),
        ({"status": "rejected", "status_reason": "  "}, "status_reason", "needs a reason"),
        ({"expected_rrf": 0}, "expected_rrf", "above 0"),
        ({"expected_rrf": "-10"}, "expected_rrf", "above 0"),
        ({"expected_rrf": "lots"}, "expected_rrf", "must be a number"),
        ({"expected_rrf": float("inf")}, "expected_rrf", "above 0"),
        ({"due_date": "31/03/2027"}, "due_date", "YYYY-MM-DD"),
        ({"text": " "}, "text", "text is required"),
        ({"owner": "x" * 121}, "owner", "at most 120 characters"),
        ({"position": 3}, "position", "not an editable action field"),
    ],
)
def test_bad_changes_are_refused_naming_the_rule_and_nothing_is_saved(
    session: Session, changes: dict, field: str, rule: str  # type: ignore[type-arg]
) -> None:
    scenario = make_scenario_tree(session)
    action = add_action(session=session, study_id=scenario.study_id, text="Add a trip")
    with pytest.raises(ActionInputError) as raised:
        save_action(session=session, action_id=action.id, changes=changes)
    assert raised.value.field == field
    assert rule in raised.value.message
    session.refresh(action)
    assert (action.status, action.version) == (ActionStatus.OPEN, 1)


def test_a_rejected_action_with_a_reason_is_saved(session: Session) -> None:
    scenario = make_scenario_tree(session)
    action = add_action(session=session, study_id=scenario.study_id, text="Add a trip")
    save_action(session=session, action_id=action.id,
                  changes={"status": "rejected", "status_reason": "Relief valve is enough"})
    assert (action.status, action.status_reason) == (ActionStatus.REJECTED,
                                                     "Relief valve is enough")


def test_the_list_is_sorted_by_due_date_with_undated_last_and_overdue_marked(
    session: Session,
) -> None:
    study_id = make_scenario_tree(session).study_id
    for text, due, status in [
        ("undated", None, "open"),
        ("late and open", "2026-11-30", "open"),
        ("due today", "2026-12-01", "open"),
        ("late but done", "2026-10-01", "done"),
        ("late, in progress", "2026-11-01", "in_progress"),
        ("late but rejected", "2026-09-01", "rejected"),
    ]:
        action = add_action(session=session, study_id=study_id, text=text, due_date=due)
        save_action(session=session, action_id=action.id,
                      changes={"status": status, "status_reason": "not needed"})
    listed = list_actions(session=session, study_id=study_id, today=TODAY)
    assert [(e.action.text, e.overdue) for e in listed.entries] == [
        ("late but rejected", False),
        ("late but done", False),
        ("late, in progress", True),
        ("late and open", True),
        ("due today", False),
        ("undated", False),
    ]
    assert listed.overdue_count == 2


def test_links_are_logged_and_refuse_a_scenario_of_another_study(session: Session) -> None:
    scenario = make_scenario_tree(session)
    other = make_scenario_tree(session)
    action = add_action(session=session, study_id=scenario.study_id, text="Add a trip")
    link_scenario(session=session, action_id=action.id, scenario_id=scenario.id)
    link_scenario(session=session, action_id=action.id, scenario_id=scenario.id)
    with pytest.raises(ActionInputError, match="not in this study"):
        link_scenario(session=session, action_id=action.id, scenario_id=other.id)
    unlink_scenario(session=session, action_id=action.id, scenario_id=scenario.id)
    logged = session.exec(
        select(ChangeLogEntry.action, ChangeLogEntry.scenario_id)
        .where(ChangeLogEntry.entity == "recommendation", ChangeLogEntry.field == "scenarios")
        .order_by(ChangeLogEntry.id)
    ).all()
    assert list(logged) == [("link", scenario.id), ("unlink", scenario.id)]


def test_deleting_an_action_removes_its_links(session: Session) -> None:
    scenario = make_scenario_tree(session)
    study = session.get(Study, scenario.study_id)
    second = make_scenario(session, make_deviation(session, make_node(session, study)))
    action = add_action(session=session, study_id=scenario.study_id, text="Add a trip",
                           scenario_ids=[scenario.id, second.id])
    remove_action(session=session, action_id=action.id)
    assert session.exec(select(RecommendationScenario)).all() == []
    with pytest.raises(NotFoundError):
        remove_action(session=session, action_id=action.id)
