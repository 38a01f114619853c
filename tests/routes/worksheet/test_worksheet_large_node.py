"""A large node's worksheet, read as the scribe's browser receives it: slim lines first, the
scenarios being worked on in full, the rest of each deviation in parts, any scenario opened
on demand. (The browser side: tests/browser/worksheet/test_worksheet_large_node.py.)"""
# ruff: noqa: RUF001, RUF003 - the multiplication sign is what the page shows

import re

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import Deviation, Node, Safeguard, Scenario, Step
from app.likelihood.types import StepKind
from app.services.study.tree import load_node_tree
from app.services.worksheet.page import node_delete_question
from app.services.worksheet.sheet_rows import FIRST_PAINT_ROWS, FULL_NODE_UP_TO, ROWS_PER_PART
from tests.factories import first_category, make_deviation, make_node, make_study
from tests.helpers import HX, attrs_of, figures, text_of

PER_DEVIATION = 30  # two deviations: 60 scenarios, more than FULL_NODE_UP_TO


@pytest.fixture
def big_node(session: Session) -> Node:
    """Two deviations of 30 scenarios: each 1/yr, one IPL at 1 in 10, one safeguard; the
    tolerable frequency is 1e-5/yr."""
    study = make_study(session)
    node = make_node(session, study, number="7")
    category = first_category(session, study)
    for d_index in range(2):
        deviation = make_deviation(session, node, parameter=f"Level {d_index + 1}",
                                   position=d_index)
        for s_index in range(PER_DEVIATION):
            scenario = Scenario(study_id=study.id, deviation_id=deviation.id, position=s_index,
                                cause=f"Cause {d_index + 1}.{s_index + 1}",
                                consequence="Overfill", severity_category_id=category.id)
            session.add(scenario)
            session.flush()
            session.add_all([
                Step(study_id=study.id, scenario_id=scenario.id, position=0, value=1.0,
                     kind=StepKind.INITIATING_EVENT, description="Control loop failure"),
                Step(study_id=study.id, scenario_id=scenario.id, position=10, value=0.1,
                     value_text="1 in 10", kind=StepKind.IPL, description="High level trip"),
                Safeguard(study_id=study.id, scenario_id=scenario.id, description="Gauge")])
    session.commit()
    return node


def scenarios_of(session: Session, node: Node) -> list[Scenario]:
    """The node's scenarios in worksheet order."""
    return list(session.exec(
        select(Scenario).join(Deviation).where(Deviation.node_id == node.id)
        .order_by(Deviation.position, Scenario.position)).all())  # type: ignore[arg-type]


def ipl_of(session: Session, scenario: Scenario) -> Step:
    """The scenario's one IPL step."""
    [layer] = [s for s in session.exec(select(Step).where(Step.scenario_id == scenario.id))
               if s.kind == StepKind.IPL]
    return layer


def slim_ids(html: str) -> list[int]:
    """The scenario ids drawn as slim lines, in page order."""
    return [int(found) for found in re.findall(r'class="scenario slim" id="scenario-(\d+)"', html)]


def full_ids(html: str) -> list[int]:
    """The scenario ids drawn in full (with their editing fields), in page order."""
    return [int(found) for found in re.findall(r'<article class="scenario" id="scenario-(\d+)"',
                                               html)]


def page_of(client: TestClient, node: Node, query: str = "",
            headers: dict[str, str] | None = None) -> str:
    """The node's worksheet page as served."""
    response = client.get(f"/studies/{node.study_id}/nodes/{node.id}{query}", headers=headers)
    assert response.status_code == 200
    return response.text


def test_the_first_paint_of_a_large_node_is_slim_lines_with_the_figures_worked_out(
    client: TestClient, session: Session, big_node: Node
) -> None:
    assert 2 * PER_DEVIATION > FULL_NODE_UP_TO
    html = page_of(client, big_node)
    scenarios = scenarios_of(session, big_node)
    assert slim_ids(html) == [s.id for s in scenarios[:FIRST_PAINT_ROWS]]
    assert full_ids(html) == [] and "data-value-field" not in html
    first = text_of(html, f"scenario-{scenarios[0].id}")
    # 1/yr × 0.1 = 0.1/yr against 1e-5/yr: short by a factor of 1e4 (hand computation)
    assert first == ("7.1.1 Cause 1.1 → Overfill 1.0e-1 /yr · Single fatality 1.0e-5 /yr "
                     "▲ short ×1.0e4 ⚑ flagged")
    drawn = FIRST_PAINT_ROWS - PER_DEVIATION
    assert f"7.2.{drawn + 1} to 7.2.{PER_DEVIATION}" in html  # the part still to come
    assert f'rows?start={drawn}"' in html


def test_the_rest_of_a_deviation_arrives_in_numbered_parts(
    client: TestClient, session: Session, big_node: Node
) -> None:
    scenarios = scenarios_of(session, big_node)
    deviation_id = scenarios[PER_DEVIATION].deviation_id
    drawn = FIRST_PAINT_ROWS - PER_DEVIATION
    part = client.get(f"/studies/{big_node.study_id}/deviations/{deviation_id}/rows",
                      params={"start": drawn}, headers=HX)
    assert part.status_code == 200
    assert slim_ids(part.text) == [s.id for s in scenarios[PER_DEVIATION + drawn:]]
    assert PER_DEVIATION - drawn <= ROWS_PER_PART and "data-more-rows" not in part.text
    assert "7.2.30 Cause 2.30" in text_of(part.text, f"scenario-{scenarios[-1].id}")
    beyond = client.get(f"/studies/{big_node.study_id}/deviations/{deviation_id}/rows",
                        params={"start": 999}, headers=HX)
    assert beyond.status_code == 200 and slim_ids(beyond.text) == []
    elsewhere = client.get(f"/studies/{big_node.study_id + 1}/deviations/{deviation_id}/rows",
                           headers=HX)
    assert elsewhere.status_code == 404
    without_script = client.get(f"/studies/{big_node.study_id}/deviations/{deviation_id}/rows")
    assert "Back to the node" in without_script.text  # a page of its own


def test_the_focused_scenario_and_those_the_page_had_open_are_drawn_in_full(
    client: TestClient, session: Session, big_node: Node
) -> None:
    scenarios = scenarios_of(session, big_node)
    far, near = scenarios[PER_DEVIATION + 24], scenarios[4]  # 7.2.25 and 7.1.5
    layer = ipl_of(session, far)
    html = page_of(client, big_node, f"?focus=step-{layer.id}-value_text",
                   headers={"X-Tallyroom-Open": f"{near.id},abc,{10**9}"})
    assert full_ids(html) == [near.id, far.id]
    assert "autofocus" in attrs_of(html, f"step-{layer.id}-value_text")
    assert figures(html, far.id)["mitigated"] == "1.0e-1 /yr"
    # the far scenario's deviation is drawn up to it; the first paint's budget is spent
    assert slim_ids(html)[-1] == scenarios[PER_DEVIATION + 23].id
    assert "7.2.26 to 7.2.30" in html


def test_a_slim_line_opens_in_full_with_the_cursor_in_its_cause(
    client: TestClient, session: Session, big_node: Node
) -> None:
    scenario = scenarios_of(session, big_node)[PER_DEVIATION + 27]
    path = f"/studies/{big_node.study_id}/scenarios/{scenario.id}/open"
    opened = client.get(path, headers=HX)
    assert opened.status_code == 200
    assert full_ids(opened.text) == [scenario.id]
    assert "Scenario 7.2.28" in opened.text
    assert "autofocus" in attrs_of(opened.text, f"sc-{scenario.id}-cause")
    assert figures(opened.text, scenario.id)["gap"] == "× 1.0e4 · +4.0 orders"
    plain = client.get(path, follow_redirects=False)
    assert plain.status_code == 303
    assert plain.headers["location"].endswith(f"?focus=sc-{scenario.id}-cause")
    assert client.get(f"/studies/{big_node.study_id + 1}/scenarios/{scenario.id}/open",
                      headers=HX).status_code == 404


def test_the_delete_questions_of_a_large_node_count_what_the_whole_tree_counts(
    client: TestClient, session: Session, big_node: Node
) -> None:
    html = page_of(client, big_node)
    tree = load_node_tree(session, big_node.study_id, big_node.id or 0)
    expected = node_delete_question(tree.node)  # the small node's path, from every row
    assert expected == ("Delete node 7 and its 2 deviations, 60 scenarios, 120 steps, "
                        "60 safeguards?")
    assert f'hx-confirm="{expected}"' in html
    assert ('hx-confirm="Delete deviation 7.2 &#39;More Level 2&#39; and its 30 scenarios, '
            '60 steps, 30 safeguards?"') in html


def test_a_slim_line_says_what_an_incomplete_scenario_still_needs(
    client: TestClient, session: Session, big_node: Node
) -> None:
    second = scenarios_of(session, big_node)[1]
    [initiating] = [s for s in session.exec(select(Step).where(Step.scenario_id == second.id))
                    if s.kind == StepKind.INITIATING_EVENT]
    initiating.value = None
    session.add(initiating)
    session.commit()
    line = text_of(page_of(client, big_node), f"scenario-{second.id}")
    assert line.startswith("7.1.2 Cause 1.2 → Overfill incomplete: ")
    assert line.endswith("◌ incomplete")


@pytest.mark.parametrize("focus", ["step-99999999999999999999999-value_text", "sc-²-cause",
                                   "sg-0-description", "step--1-basis", "add-sg-4294967296"])
def test_a_focus_or_open_list_that_names_no_row_draws_the_first_paint(
    client: TestClient, session: Session, big_node: Node, focus: str
) -> None:
    html = page_of(client, big_node, f"?focus={focus}",
                   headers={"X-Tallyroom-Open": "x,99999999999999999999999,-3,0, 7 7"})
    assert full_ids(html) == [] and len(slim_ids(html)) == FIRST_PAINT_ROWS
