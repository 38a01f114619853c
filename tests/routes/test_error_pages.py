"""Errors: a browser gets a page in the app's style, API and htmx clients keep JSON.

A browser's Accept header names text/html first (Chromium sends
"text/html,application/xhtml+xml,…"); an API client names application/json.
"""

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session

from app.db.models import Scenario
from tests.factories import make_scenario_tree
from tests.helpers import HX

BROWSER = {"Accept": "text/html,application/xhtml+xml,application/xml;q=0.9,*/*;q=0.8"}
API = {"Accept": "application/json"}


@pytest.fixture
def scenario(session: Session) -> Scenario:
    return make_scenario_tree(session)


def _is_page(response_text: str, heading: str) -> bool:
    """The app's error page: its masthead, stylesheet, heading and cautions."""
    return all(part in response_text for part in (
        '<header class="masthead">', "app.css", f"<h1>{heading}", 'class="cautions"'))


@pytest.mark.parametrize(("path", "status", "heading"), [
    ("/studies/987654", 404, "Not found"),  # a missing row
    ("/studies/{study}/nodes/987654", 404, "Not found"),
    ("/no-such-page", 404, "Not found"),  # a missing path
    ("/studies/abc", 400, "Not understood"),  # an id that cannot be one
    ("/studies/{study}/nodes/1.0", 400, "Not understood"),
])
def test_a_browser_gets_an_error_page_in_the_apps_style(
    client: TestClient, scenario: Scenario, path: str, status: int, heading: str
) -> None:
    response = client.get(path.format(study=scenario.study_id), headers=BROWSER)
    assert response.status_code == status
    assert response.headers["content-type"].startswith("text/html")
    assert _is_page(response.text, heading)


@pytest.mark.parametrize(("path", "status", "words"), [
    ("/studies/987654", 404, "There is no study 987654"),
    ("/no-such-page", 404, "Not Found"),
    ("/studies/abc", 400, "ASCII digits"),
])
def test_an_api_client_keeps_json(
    client: TestClient, scenario: Scenario, path: str, status: int, words: str
) -> None:
    response = client.get(path, headers=API)
    assert response.status_code == status
    assert response.headers["content-type"] == "application/json"
    assert words in response.json()["detail"]


def test_a_method_the_address_does_not_take_is_405_page_or_json(
    client: TestClient, scenario: Scenario
) -> None:
    url = f"/studies/{scenario.study_id}/room"
    page = client.put(url, headers=BROWSER)
    assert page.status_code == 405 and _is_page(page.text, "Not done this way")
    assert "does not take that kind of request" in page.text
    assert "GET" in page.headers["allow"]
    api = client.put(url, headers=API)
    assert (api.status_code, api.json()) == (405, {"detail": "Method Not Allowed"})


def test_refused_input_from_a_browser_is_a_page_naming_the_rule(
    client: TestClient, scenario: Scenario
) -> None:
    url = f"/studies/{scenario.study_id}/proof-test?step_id={2**63}"
    page = client.get(url, headers=BROWSER)
    assert page.status_code == 422 and _is_page(page.text, "Not accepted")
    assert "query step_id: Input should be less than or equal to" in page.text
    api = client.get(url, headers=API)
    assert api.status_code == 422 and api.json()["detail"][0]["loc"] == ["query", "step_id"]


def test_a_browser_post_to_an_impossible_row_is_400_and_htmx_keeps_json(
    client: TestClient, scenario: Scenario
) -> None:
    url = f"/studies/{scenario.study_id}/scenarios/abc"
    page = client.post(url, data={"cause": "x"}, headers=BROWSER)
    assert page.status_code == 400 and _is_page(page.text, "Not understood")
    assert "path row_id: an id is a whole number" in page.text
    htmx = client.post(url, data={"cause": "x"}, headers={**HX, **BROWSER})
    assert htmx.status_code == 422 and htmx.json()["detail"][0]["loc"] == ["path", "row_id"]


def test_htmx_asking_for_a_missing_row_is_answered_as_before(
    client: TestClient, scenario: Scenario
) -> None:
    response = client.get("/studies/987654", headers={**HX, **BROWSER})
    assert response.status_code == 404 and "There is no study 987654" in response.text
