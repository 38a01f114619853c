"""The study list and the study overview, read as a user sees them."""

from fastapi.testclient import TestClient
from sqlmodel import Session

from app.db.models import Study
from tests.factories import make_scenario_tree, make_step
from tests.helpers import table_rows


def test_the_study_list_shows_each_study_with_its_size(
    client: TestClient, demo_study: Study
) -> None:
    rows = table_rows(client.get("/").text, "study-list")
    assert rows[0] == ["Study", "Facility", "Revision", "Nodes", "Scenarios", "Copy"]
    assert rows[1][0] == f"{demo_study.title} ✎ invented"
    assert int(rows[1][3]) >= 3 and int(rows[1][4]) >= 15


def test_the_study_page_shows_each_scenarios_frequency_target_and_gap(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)  # IE 0.1/yr against 1e-5/yr
    make_step(session, scenario, value=0.01, description="Relief valve")
    page = client.get(f"/studies/{scenario.study_id}").text
    assert 'data-field="mitigated">1.0e-3<' in page
    assert 'data-field="target">1.0e-5<' in page
    assert 'data-field="gap">+2.0<' in page
    assert "SIL 1" in page


def test_an_unknown_study_is_a_404_page(client: TestClient, session: Session) -> None:
    response = client.get("/studies/999")
    assert response.status_code == 404
    assert "There is no study 999." in response.text


def test_every_page_carries_the_cautions(client: TestClient, session: Session) -> None:
    page = client.get("/").text
    assert "decision support for a competent review team" in page
    assert "only as good as the inputs the team agrees" in page
