"""The node worksheet page, read as the scribe sees it."""
# ruff: noqa: RUF001 - the multiplication sign is what the page shows

import re

from fastapi.testclient import TestClient
from sqlmodel import Session

from app.db.models import Study
from app.likelihood.types import StepKind
from tests.factories import (
    make_deviation,
    make_node,
    make_safeguard,
    make_scenario,
    make_scenario_tree,
    make_step,
    make_study,
)
from tests.helpers import HX, attrs_of, figures, parse, text_of


def test_the_worksheet_shows_each_scenario_with_its_steps_and_figures(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)  # IE 0.1/yr against 1e-5/yr
    enabling = make_step(session, scenario, kind=StepKind.ENABLING_CONDITION, value=0.5,
                         value_text="1 in 2", description="Tank being filled", position=1)
    ipl = make_step(session, scenario, value=0.01, value_text="1 in 100",
                    description="Relief valve")
    make_step(session, scenario, value=0.1, description="Operator response",
              credited=False)
    safeguard = make_safeguard(session, scenario, description="Level gauge glass")
    page = client.get(f"/studies/{scenario.study_id}/worksheet", follow_redirects=True).text
    assert figures(page, scenario.id) == {
        "initiating": "1.0e-1 /yr", "enabling": "× 5.0e-1", "modifiers": "× 1.0e0",
        "ipls": "× 1.0e-2", "mitigated": "5.0e-4 /yr", "tolerable": "1.0e-5 /yr",
        "gap": "× 5.0e1 · +1.7 orders", "rrf": "50", "sil": "SIL 1"}
    assert attrs_of(page, f"step-{ipl.id}-value_text")["value"] == "1 in 100"
    assert text_of(page, f"step-{ipl.id}-value_text-said") == "1 in 100 · 1.0e-2"
    assert text_of(page, f"step-{enabling.id}-value_text-said") == "1 in 2 · 5.0e-1"
    assert attrs_of(page, f"sg-{safeguard.id}-description")["value"] == "Level gauge glass"
    assert "decision support for a competent review team" in page


def test_steps_show_in_ladder_order_with_the_credited_box_only_on_layers(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    ipl = make_step(session, scenario, description="Trip", position=0)
    modifier = make_step(session, scenario, kind=StepKind.CONDITIONAL_MODIFIER,
                         value=0.5, description="Occupancy", position=5)
    page = client.get(f"/studies/{scenario.study_id}/worksheet", follow_redirects=True).text
    rows = [element_id for element_id in parse(page).found if element_id.startswith("step-row-")]
    ie_id = int(rows[0].removeprefix("step-row-"))
    assert rows == [f"step-row-{ie_id}", f"step-row-{modifier.id}", f"step-row-{ipl.id}"]
    assert f"step-{ipl.id}-credited" in parse(page).found
    assert f"step-{modifier.id}-credited" not in parse(page).found


def test_the_page_has_a_node_switcher_and_the_ladder(client: TestClient, session: Session) -> None:
    study = make_study(session)
    first, second = make_node(session, study), make_node(session, study, number="2",
                                                         name="Reactor")
    scenario = make_scenario(session, make_deviation(session, first))
    page = client.get(f"/studies/{study.id}/nodes/{first.id}").text
    assert f'href="/studies/{study.id}/nodes/{second.id}"' in page
    assert "2 · Reactor" in page
    assert f'id="scenario-{scenario.id}-results"' in page and "<svg" in page
    assert 'href="http://testserver/help/keys"' in page


def test_htmx_asks_for_the_worksheet_region_only(client: TestClient, session: Session) -> None:
    scenario = make_scenario_tree(session)
    response = client.get(f"/studies/{scenario.study_id}/worksheet", follow_redirects=True,
                          headers=HX)
    assert response.text.lstrip().startswith('<div id="worksheet"')
    assert "HX-Request" in response.headers["Vary"].split(", ")  # and Cookie: pages carry a token


def test_an_unknown_node_or_a_node_of_another_study_is_a_404(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    other = make_study(session, title="Other (invented)")
    node_of_first = client.get(f"/studies/{scenario.study_id}/worksheet",
                               follow_redirects=False).headers["location"]
    node_id = int(node_of_first.rsplit("/", 1)[1])
    assert client.get(f"/studies/{other.id}/nodes/{node_id}").status_code == 404
    assert client.get(f"/studies/{scenario.study_id}/nodes/999").status_code == 404


def test_a_study_without_nodes_opens_a_worksheet_that_adds_the_first(
    client: TestClient, session: Session
) -> None:
    study = make_study(session)
    response = client.get(f"/studies/{study.id}/worksheet", follow_redirects=False)
    assert response.status_code == 200
    assert "This study has no nodes yet" in response.text
    assert 'id="add-node" name="name"' in response.text


def test_the_node_picker_opens_the_chosen_node(client: TestClient, session: Session) -> None:
    scenario = make_scenario_tree(session)
    study = session.get(Study, scenario.study_id)
    assert study is not None
    second = make_node(session, study, name="Second", number="2")
    picked = client.get(f"/studies/{study.id}/worksheet?node={second.id}",
                        follow_redirects=False)
    assert picked.headers["location"] == f"/studies/{study.id}/nodes/{second.id}"
    other = client.get(f"/studies/{study.id}/worksheet?node=99999", follow_redirects=False)
    assert other.headers["location"] != picked.headers["location"]  # not this study's: first


def test_the_keyboard_help_lists_the_shortcuts(client: TestClient, session: Session) -> None:
    page = client.get("/help/keys").text
    for keys in ("Enter", "Esc", "Alt</kbd>+<kbd>↑", "Alt</kbd>+<kbd>Delete", "Alt</kbd>+<kbd>Z"):
        assert keys in page


def test_step_details_proof_test_and_actions_links_are_on_the_keyboard_route(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    make_step(session, scenario, description="Trip")
    study = session.get(Study, scenario.study_id)
    assert study is not None
    node_id = client.get(f"/studies/{study.id}/worksheet", follow_redirects=False)
    page = client.get(node_id.headers["location"]).text
    links = re.findall(r'<a class="step-link[^>]*>', page)
    assert len(links) >= 3  # details, proof test, actions
    assert not [a for a in links if 'tabindex="-1"' in a]
    labels = set(re.findall(r'aria-label="([^"]*) in scenario 1\.1\.1', page))
    assert {"Details of step 2", "Proof test of step 2"} <= labels
