"""A scenario rated for people, environment and asset is judged by its most demanding rating."""

import html

from fastapi.testclient import TestClient
from sqlmodel import Session

from app.db.models import Receptor, Scenario, Study
from tests.factories import make_category, make_scenario_tree
from tests.helpers import HX, attrs_of, figures


def _rated_scenario(session: Session) -> tuple[Scenario, int, int]:
    scenario = make_scenario_tree(session)  # people category: tolerable 1e-5 per year
    study = session.get(Study, scenario.study_id)
    assert study is not None
    environment = make_category(session, study, name="E2 Off-site pollution",
                                tolerable_frequency=1e-6, receptor=Receptor.ENVIRONMENT)
    asset = make_category(session, study, name="A1 Moderate loss", tolerable_frequency=1e-2,
                          receptor=Receptor.ASSET)
    return scenario, environment.id or 0, asset.id or 0


def _post(client: TestClient, scenario: Scenario, field: str, value: str) -> str:
    response = client.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}",
                           data={field: value}, headers=HX)
    assert response.status_code == 200
    return response.text


def test_the_worksheet_offers_environment_and_asset_ratings_of_their_own_receptor(
    client: TestClient, session: Session
) -> None:
    scenario, environment_id, asset_id = _rated_scenario(session)
    page = client.get(f"/studies/{scenario.study_id}/worksheet", follow_redirects=True).text
    assert attrs_of(page, f"sc-{scenario.id}-environment_category_id")["name"] == (
        "environment_category_id")
    assert f'<option value="{environment_id}"' in page and f'<option value="{asset_id}"' in page


def test_a_more_demanding_environment_rating_governs_the_target(
    client: TestClient, session: Session
) -> None:
    scenario, environment_id, _ = _rated_scenario(session)
    reply = _post(client, scenario, "environment_category_id", str(environment_id))
    assert figures(reply, scenario.id or 0)["tolerable"] == "1.0e-6 /yr"
    session.refresh(scenario)
    assert scenario.environment_category_id == environment_id


def test_a_less_demanding_asset_rating_leaves_the_people_target_in_charge(
    client: TestClient, session: Session
) -> None:
    scenario, _, asset_id = _rated_scenario(session)
    reply = _post(client, scenario, "asset_category_id", str(asset_id))
    assert figures(reply, scenario.id or 0)["tolerable"] == "1.0e-5 /yr"


def test_clearing_a_rating_returns_to_the_people_target(
    client: TestClient, session: Session
) -> None:
    scenario, environment_id, _ = _rated_scenario(session)
    _post(client, scenario, "environment_category_id", str(environment_id))
    reply = _post(client, scenario, "environment_category_id", "")
    assert figures(reply, scenario.id or 0)["tolerable"] == "1.0e-5 /yr"
    session.refresh(scenario)
    assert scenario.environment_category_id is None


def test_a_category_of_another_study_is_refused_at_the_field(
    client: TestClient, session: Session
) -> None:
    scenario, _, _ = _rated_scenario(session)
    other, _, _ = _rated_scenario(session)
    foreign = session.get(Scenario, other.id)
    assert foreign is not None
    response = client.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}",
                           data={"environment_category_id": str(foreign.severity_category_id)},
                           headers=HX)
    assert response.status_code == 422
    assert "choose one of the study's severity categories" in html.unescape(response.text)
    session.refresh(scenario)
    assert scenario.environment_category_id is None
