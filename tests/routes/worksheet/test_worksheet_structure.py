"""Building the worksheet: create, edit, move, delete and undo rows; every bad input refused."""
# ruff: noqa: RUF001 - the multiplication sign is what the page shows

import html

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, col, select

from app.db.models import (
    DeletedItem,
    Deviation,
    Node,
    Recommendation,
    RecommendationScenario,
    Safeguard,
    Scenario,
    SeverityCategory,
    Step,
    Study,
)
from app.likelihood.types import StepKind
from app.services.record.actions import add_action
from tests.factories import (
    make_category,
    make_deviation,
    make_node,
    make_safeguard,
    make_scenario,
    make_scenario_tree,
    make_step,
    make_study,
)
from tests.helpers import HX, attrs_of, figures, text_of


def rows(session: Session, model: type, **where: int) -> list:  # type: ignore[type-arg]
    """Rows of `model` matching `where`, in display order, fresh from the database."""
    session.expire_all()
    table: object = model
    statement = select(model)
    for name, value in where.items():
        statement = statement.where(getattr(table, name) == value)
    if hasattr(model, "position"):
        statement = statement.order_by(col(model.position), col(model.id))  # type: ignore[attr-defined]
    return list(session.exec(statement).all())


@pytest.fixture
def scenario(session: Session) -> Scenario:
    """One scenario (IE 0.1/yr, target 1e-5/yr) under node 1, deviation 'More Level'."""
    return make_scenario_tree(session)


def node_of(session: Session, scenario: Scenario) -> Node:
    deviation = session.get(Deviation, scenario.deviation_id)
    assert deviation is not None
    node = session.get(Node, deviation.node_id)
    assert node is not None
    return node


# --- create ------------------------------------------------------------------------------

def test_adding_a_step_puts_it_after_the_row_and_focuses_its_first_field(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    first = make_step(session, scenario, description="Alarm", position=0)
    last = make_step(session, scenario, description="Trip", position=1)
    response = client.post(f"/studies/{scenario.study_id}/steps", headers=HX,
                           data={"parent_id": scenario.id, "after_id": first.id, "kind": "ipl"})
    assert response.status_code == 200
    layers = [s for s in rows(session, Step, scenario_id=scenario.id or 0)
              if s.kind == StepKind.IPL]
    assert [s.description for s in layers] == ["Alarm", "", "Trip"]
    new = layers[1]
    assert (new.value, new.value_text, new.credited) == (1.0, "1", True)  # no credit until agreed
    assert attrs_of(response.text, f"step-{new.id}-description").get("autofocus") == ""
    assert last.id is not None


def test_a_new_scenario_comes_with_an_empty_initiating_event_and_no_severity(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    """No stand-in numbers: the scenario is incomplete until the team gives both."""
    response = client.post(f"/studies/{scenario.study_id}/scenarios", headers=HX,
                           data={"parent_id": scenario.deviation_id})
    assert response.status_code == 200
    created = rows(session, Scenario, deviation_id=scenario.deviation_id)[-1]
    assert created.severity_category_id is None
    steps = rows(session, Step, scenario_id=created.id)
    assert [(s.kind, s.value, s.value_text) for s in steps] == [
        (StepKind.INITIATING_EVENT, None, "")]
    shown = figures(response.text, created.id or 0)
    assert "mitigated" not in shown and "sil" not in shown
    assert "Incomplete: no initiating event frequency and no severity yet" in shown["incomplete"]


def test_adding_a_deviation_and_a_safeguard(client: TestClient, session: Session,
                                            scenario: Scenario) -> None:
    node = node_of(session, scenario)
    client.post(f"/studies/{scenario.study_id}/deviations", headers=HX,
                data={"parent_id": node.id})
    assert len(rows(session, Deviation, node_id=node.id or 0)) == 2
    response = client.post(f"/studies/{scenario.study_id}/safeguards", headers=HX,
                           data={"parent_id": scenario.id, "description": "Gauge glass"})
    assert response.status_code == 200
    assert [g.description for g in rows(session, Safeguard, scenario_id=scenario.id)] == [
        "Gauge glass"]


def test_adding_a_node_opens_its_worksheet(client: TestClient, session: Session,
                                           scenario: Scenario) -> None:
    response = client.post(f"/studies/{scenario.study_id}/nodes", headers=HX,
                           data={"name": "Reactor"})
    created = rows(session, Node, study_id=scenario.study_id)[-1]
    assert (created.number, created.name) == ("2", "Reactor")
    assert response.headers["HX-Redirect"] == (
        f"/studies/{scenario.study_id}/nodes/{created.id}?focus=node-{created.id}-name")
    plain = client.post(f"/studies/{scenario.study_id}/nodes", data={"name": "Dryer"},
                        follow_redirects=False)
    assert plain.status_code == 303


@pytest.mark.parametrize(("path", "data", "message"), [
    ("nodes", {"name": "  "}, "the node name is required."),
    ("nodes", {"name": "x" * 201}, "at most 200 characters (got 201)."),
    ("safeguards", {"description": ""}, "the safeguard description is required."),
    ("steps", {"kind": "initiating_event"}, "a scenario has exactly one initiating event"),
    ("steps", {"kind": "wish"}, "the step kind must be one of"),
])
def test_creating_a_bad_row_is_refused_with_the_rule(
    client: TestClient, session: Session, scenario: Scenario, path: str,
    data: dict[str, str], message: str
) -> None:
    before = [len(rows(session, m)) for m in (Node, Safeguard, Step)]
    response = client.post(f"/studies/{scenario.study_id}/{path}", headers=HX,
                           data={"parent_id": str(scenario.id), **data,
                                 "node_id": str(node_of(session, scenario).id)})
    assert response.status_code == 422
    assert message in text_of(response.text, "worksheet-notice")
    assert [len(rows(session, m)) for m in (Node, Safeguard, Step)] == before


def test_a_scenario_can_be_added_before_the_risk_criteria_and_waits_for_them(
    client: TestClient, session: Session
) -> None:
    study = make_study(session)
    for category in study_categories(session, study.id or 0):
        session.delete(category)
    session.commit()
    deviation = make_deviation(session, make_node(session, study))
    response = client.post(f"/studies/{study.id}/scenarios", headers=HX,
                           data={"parent_id": deviation.id})
    assert response.status_code == 200
    created = rows(session, Scenario, deviation_id=deviation.id)[-1]
    assert created.severity_category_id is None
    assert "no severity yet" in figures(response.text, created.id or 0)["incomplete"]


def study_categories(session: Session, study_id: int) -> list:  # type: ignore[type-arg]
    """The study's severity categories."""
    return rows(session, SeverityCategory, study_id=study_id)


def test_a_parent_of_another_study_is_a_404(client: TestClient, session: Session,
                                            scenario: Scenario) -> None:
    other = make_study(session, title="Other (invented)")
    response = client.post(f"/studies/{other.id}/steps", headers=HX,
                           data={"parent_id": scenario.id})
    assert response.status_code == 404


# --- edit --------------------------------------------------------------------------------

def test_editing_the_cause_saves_it_and_says_so(client: TestClient, session: Session,
                                               scenario: Scenario) -> None:
    response = client.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}",
                           headers=HX, data={"cause": "  Pump trips  "})
    assert response.status_code == 200
    assert text_of(response.text, f"sc-{scenario.id}-cause-said") == "saved"
    assert rows(session, Scenario, id=scenario.id or 0)[0].cause == "Pump trips"


def test_changing_the_severity_recomputes_against_the_new_target(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    study_id = scenario.study_id
    study = session.get(Study, study_id)
    assert study is not None
    minor = make_category(session, study, name="Minor", tolerable_frequency=1e-2)
    response = client.post(f"/studies/{study_id}/scenarios/{scenario.id}", headers=HX,
                           data={"severity_category_id": str(minor.id)})
    shown = figures(response.text, scenario.id or 0)
    assert shown["tolerable"] == "1.0e-2 /yr" and shown["gap"] == "× 1.0e1 · +1.0 orders"


@pytest.mark.parametrize("category", ["abc", "99999"])
def test_a_severity_not_of_this_study_is_refused(client: TestClient, session: Session,
                                                 scenario: Scenario, category: str) -> None:
    response = client.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}",
                           headers=HX, data={"severity_category_id": category})
    assert response.status_code == 422
    said = text_of(response.text, f"sc-{scenario.id}-severity_category_id-said")
    assert said.startswith("choose one of the study's severity categories")
    assert rows(session, Scenario, id=scenario.id or 0)[0].severity_category_id == (
        scenario.severity_category_id)


def test_a_severity_taken_back_makes_the_scenario_incomplete_again(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    response = client.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}",
                           headers=HX, data={"severity_category_id": ""})
    assert response.status_code == 200
    assert rows(session, Scenario, id=scenario.id or 0)[0].severity_category_id is None
    assert "Incomplete: no severity yet" in figures(response.text, scenario.id or 0)["incomplete"]


def test_uncrediting_a_layer_takes_it_out_of_the_product(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    layer = make_step(session, scenario, value=0.01)
    response = client.post(f"/studies/{scenario.study_id}/steps/{layer.id}", headers=HX,
                           data={"credited": "false"})
    assert figures(response.text, scenario.id or 0)["mitigated"] == "1.0e-1 /yr"
    assert rows(session, Step, id=layer.id or 0)[0].credited is False
    both = client.post(f"/studies/{scenario.study_id}/steps/{layer.id}", headers=HX,
                       data={"credited": ["false", "true"]})  # hidden field + ticked box
    assert figures(both.text, scenario.id or 0)["mitigated"] == "1.0e-3 /yr"


@pytest.mark.parametrize(("path", "field", "text", "message"), [
    ("nodes", "name", "", "the node name is required."),
    ("nodes", "number", "1" * 21, "at most 20 characters (got 21)."),
    ("scenarios", "cause", "x" * 2001, "at most 2000 characters (got 2001)."),
    ("steps", "value_text", "lots", "not a number"),
    ("safeguards", "description", " ", "the safeguard description is required."),
])
def test_a_bad_edit_is_refused_at_the_field_and_not_saved(
    client: TestClient, session: Session, scenario: Scenario, path: str, field: str,
    text: str, message: str
) -> None:
    ids = {"nodes": node_of(session, scenario).id,
           "scenarios": scenario.id,
           "steps": rows(session, Step, scenario_id=scenario.id or 0)[0].id,
           "safeguards": make_safeguard(session, scenario).id}
    prefix = {"nodes": "node", "scenarios": "sc", "steps": "step", "safeguards": "sg"}[path]
    response = client.post(f"/studies/{scenario.study_id}/{path}/{ids[path]}", headers=HX,
                           data={field: text})
    assert response.status_code == 422
    assert message in text_of(response.text, f"{prefix}-{ids[path]}-{field}-said")
    model = {"nodes": Node, "scenarios": Scenario, "steps": Step, "safeguards": Safeguard}[path]
    assert getattr(rows(session, model, id=ids[path] or 0)[0], field) != text


def test_without_javascript_a_row_form_saves_and_returns_to_the_page(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    layer = make_step(session, scenario)
    response = client.post(f"/studies/{scenario.study_id}/steps/{layer.id}",
                           data={"description": "Trip", "value_text": "1 in 100",
                                 "basis": "SIL 2 function", "credited": ["false", "true"]},
                           follow_redirects=False)
    assert response.status_code == 303
    saved = rows(session, Step, id=layer.id or 0)[0]
    assert (saved.description, saved.value, saved.value_text, saved.basis) == (
        "Trip", 0.01, "1 in 100", "SIL 2 function")


# --- move --------------------------------------------------------------------------------

def test_moving_a_step_up_and_down_within_its_kind(client: TestClient, session: Session,
                                                   scenario: Scenario) -> None:
    a, b, c = (make_step(session, scenario, description=n, position=i)
               for i, n in enumerate("ABC"))
    url = f"/studies/{scenario.study_id}/steps/{c.id}/move"
    client.post(url, headers=HX, data={"offset": "-1", "focus": f"step-{c.id}-value_text"})
    response = client.post(url, headers=HX, data={"offset": "-1"})
    layers = [s.description for s in rows(session, Step, scenario_id=scenario.id or 0)
              if s.kind == StepKind.IPL]
    assert layers == ["C", "A", "B"]
    client.post(url, headers=HX, data={"offset": "-1"})  # already first: stays
    client.post(f"/studies/{scenario.study_id}/steps/{a.id}/move", headers=HX,
                data={"offset": "1"})
    layers = [s.description for s in rows(session, Step, scenario_id=scenario.id or 0)
              if s.kind == StepKind.IPL]
    assert layers == ["C", "B", "A"]
    assert attrs_of(response.text, f"step-{c.id}-description").get("autofocus") == ""
    assert b.id is not None


def test_moving_a_node_reorders_the_switcher(client: TestClient, session: Session,
                                             scenario: Scenario) -> None:
    node = node_of(session, scenario)
    study = session.get(Study, scenario.study_id)
    assert study is not None
    second = make_node(session, study, number="2", name="Reactor", position=1)
    client.post(f"/studies/{scenario.study_id}/nodes/{second.id}/move", headers=HX,
                data={"offset": "-1"})
    assert [n.id for n in rows(session, Node, study_id=scenario.study_id)] == [second.id,
                                                                               node.id]


# --- delete and undo ---------------------------------------------------------------------

def test_deleting_asks_first_and_says_what_goes_with_it(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    make_step(session, scenario)
    make_safeguard(session, scenario)
    node = node_of(session, scenario)
    page = html.unescape(client.get(f"/studies/{scenario.study_id}/nodes/{node.id}/delete").text)
    assert ("Delete node 1 Feed drum and its 1 deviation, 1 scenario, 2 steps, 1 safeguard?"
            in page)
    worksheet = client.get(f"/studies/{scenario.study_id}/nodes/{node.id}").text
    assert 'hx-confirm="Delete node 1 and its 1 deviation, 1 scenario, 2 steps, 1 safeguard?"' in (
        worksheet)


def test_deleting_a_scenario_and_undoing_it_brings_everything_back(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    make_step(session, scenario, value=0.01, value_text="1 in 100", basis="Trip test")
    make_safeguard(session, scenario, description="Gauge")
    action = add_action(session=session, study_id=scenario.study_id, text="Add a trip",
                           scenario_ids=[scenario.id or 0])
    study_id, cause, category = scenario.study_id, scenario.cause, scenario.severity_category_id
    response = client.post(f"/studies/{study_id}/scenarios/{scenario.id}/delete", headers=HX)
    assert response.status_code == 200
    assert rows(session, Scenario) == [] and rows(session, Step) == []
    assert text_of(response.text, "undo-button") == "Undo my delete (Alt+Z)"
    assert attrs_of(response.text, "undo-button").get("autofocus") == ""
    undone = client.post(f"/studies/{study_id}/undo", headers=HX)
    assert undone.status_code == 200
    [back] = rows(session, Scenario)
    assert (back.cause, back.severity_category_id) == (cause, category)
    steps = rows(session, Step, scenario_id=back.id or 0)
    assert [(s.kind, s.value_text, s.basis) for s in steps] == [
        (StepKind.INITIATING_EVENT, "", ""), (StepKind.IPL, "1 in 100", "Trip test")]
    assert [g.description for g in rows(session, Safeguard, scenario_id=back.id or 0)] == [
        "Gauge"]
    links = rows(session, RecommendationScenario)
    assert [(k.recommendation_id, k.scenario_id) for k in links] == [(action.id, back.id)]
    assert rows(session, DeletedItem) == []


def test_the_initiating_event_cannot_be_deleted(client: TestClient, session: Session,
                                                scenario: Scenario) -> None:
    [initiating] = rows(session, Step, scenario_id=scenario.id or 0)
    response = client.post(f"/studies/{scenario.study_id}/steps/{initiating.id}/delete",
                           headers=HX)
    assert response.status_code == 409
    assert "always keeps exactly one initiating event" in text_of(response.text,
                                                                  "worksheet-notice")
    assert rows(session, Step, scenario_id=scenario.id or 0) == [initiating]


def test_deleting_a_node_goes_to_the_next_one_and_undo_restores_the_whole_subtree(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    node, study_id = node_of(session, scenario), scenario.study_id
    make_step(session, scenario)
    response = client.post(f"/studies/{study_id}/nodes/{node.id}/delete", headers=HX)
    assert response.headers["HX-Redirect"] == f"/studies/{study_id}/worksheet"
    assert rows(session, Node) == [] and rows(session, Step) == []
    client.post(f"/studies/{study_id}/undo", headers=HX)
    [node_back] = rows(session, Node)
    [deviation_back] = rows(session, Deviation, node_id=node_back.id or 0)
    [scenario_back] = rows(session, Scenario, deviation_id=deviation_back.id or 0)
    assert len(rows(session, Step, scenario_id=scenario_back.id or 0)) == 2


def test_undo_with_nothing_deleted_says_so(client: TestClient, session: Session,
                                          scenario: Scenario) -> None:
    response = client.post(f"/studies/{scenario.study_id}/undo", headers=HX)
    assert response.status_code == 409
    assert text_of(response.text, "worksheet-notice") == "You have no delete to undo."


def test_undo_refuses_a_row_whose_parent_went_since(client: TestClient, session: Session,
                                                   scenario: Scenario) -> None:
    layer, study_id = make_step(session, scenario), scenario.study_id
    client.post(f"/studies/{study_id}/steps/{layer.id}/delete", headers=HX)
    client.post(f"/studies/{study_id}/scenarios/{scenario.id}/delete", headers=HX)
    deviation = rows(session, Deviation)[0]
    make_scenario(session, deviation)  # may take the deleted scenario's id again (SQLite)
    client.post(f"/studies/{study_id}/undo", headers=HX)  # the scenario comes back
    response = client.post(f"/studies/{study_id}/undo", headers=HX)
    assert response.status_code == 409
    notice = text_of(response.text, "worksheet-notice")
    assert "The step cannot come back: scenario" in notice
    assert "was deleted since by Test Scribe" in notice and "undo that delete first" in notice


def test_without_javascript_delete_goes_through_the_question_page(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    layer = make_step(session, scenario, description="Trip")
    page = html.unescape(client.get(f"/studies/{scenario.study_id}/steps/{layer.id}/delete").text)
    assert "Delete step 'Trip'?" in page
    response = client.post(f"/studies/{scenario.study_id}/steps/{layer.id}/delete",
                           follow_redirects=False)
    assert response.status_code == 303
    assert rows(session, Step, id=layer.id or 0) == []


# --- recommendations ---------------------------------------------------------------------

def test_a_recommendation_added_on_the_worksheet_is_linked_to_its_scenario(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    response = client.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}/"
                           "recommendations", headers=HX, data={"text": "Add a high trip"})
    assert response.status_code == 200
    [action] = rows(session, Recommendation)
    assert action.text == "Add a high trip"
    assert [k.scenario_id for k in rows(session, RecommendationScenario)] == [scenario.id]
    assert "Add a high trip" in text_of(response.text, f"rec-{scenario.id}-{action.id}")
    assert attrs_of(response.text, f"add-rec-{scenario.id}").get("autofocus") == ""


def test_an_empty_recommendation_is_refused(client: TestClient, session: Session,
                                            scenario: Scenario) -> None:
    response = client.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}/"
                           "recommendations", headers=HX, data={"text": "  "})
    assert response.status_code == 422
    assert "the recommendation text is required." in text_of(response.text,
                                                              "worksheet-notice")
    assert rows(session, Recommendation) == []


def test_a_second_scenario_keeps_its_own_figures(client: TestClient, session: Session,
                                                 scenario: Scenario) -> None:
    deviation = session.get(Deviation, scenario.deviation_id)
    assert deviation is not None
    other = make_scenario(session, deviation, initiating_frequency=1.0)
    page = client.get(f"/studies/{scenario.study_id}/nodes/{deviation.node_id}").text
    assert figures(page, other.id or 0)["mitigated"] == "1.0e0 /yr"
    assert figures(page, scenario.id or 0)["mitigated"] == "1.0e-1 /yr"
