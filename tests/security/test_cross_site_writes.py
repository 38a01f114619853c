"""No cross-site writes: a change needs this session's token and must come from this site.

Each refused request is checked to have changed nothing in the database (OWASP CSRF
Prevention Cheat Sheet: synchronizer token, plus Origin and Fetch Metadata checks).
"""

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.access.csrf import FIELD, HEADER
from app.db.models import Node, Step
from tests.factories import make_scenario_tree, make_step
from tests.security.sessions import attach_token


@pytest.fixture
def layer(session: Session) -> Step:
    """An IPL at 1 in 10 in an invented one-scenario study."""
    return make_step(session, make_scenario_tree(session), value=0.1, value_text="1 in 10")


def value_url(step: Step) -> str:
    return f"/studies/{step.study_id}/steps/{step.id}/value"


def stored_text(session: Session, step: Step) -> str:
    session.expire_all()
    row = session.get(Step, step.id)
    assert row is not None
    return row.value_text


@pytest.mark.parametrize("headers", [
    {"Origin": "http://evil.example"},
    {"Origin": "null"},  # a page opened from a file on disk
    {"Origin": "http://testserver:8080"},  # same host, another port: another origin
    {"Sec-Fetch-Site": "cross-site"},
])
def test_a_cross_site_write_is_refused_even_with_the_token_and_changes_nothing(
    client: TestClient, session: Session, layer: Step, headers: dict[str, str]
) -> None:
    response = client.post(value_url(layer), data={"value_text": "1 in 1000"}, headers=headers)
    assert response.status_code == 403
    assert "another site" in response.text
    assert stored_text(session, layer) == "1 in 10"


def test_a_write_without_the_token_is_refused_and_changes_nothing(
    client: TestClient, session: Session, layer: Step
) -> None:
    del client.headers[HEADER]
    response = client.post(value_url(layer), data={"value_text": "1 in 1000"})
    assert response.status_code == 403
    assert "security token" in response.text
    assert stored_text(session, layer) == "1 in 10"


def test_a_delete_with_a_forged_token_is_refused_and_the_node_stays(
    client: TestClient, session: Session, layer: Step
) -> None:
    node_id = session.exec(select(Node.id).where(Node.study_id == layer.study_id)).one()
    response = client.post(f"/studies/{layer.study_id}/nodes/{node_id}/delete",
                           headers={HEADER: "guessed-token"})
    assert response.status_code == 403
    session.expire_all()
    assert session.get(Node, node_id) is not None


def test_another_browser_session_token_does_not_fit_this_session(
    client: TestClient, session: Session, layer: Step
) -> None:
    stolen = client.headers[HEADER]
    client.cookies.clear()  # another browser: its own session and token
    attach_token(client)
    response = client.post(value_url(layer), data={"value_text": "1 in 1000"},
                           headers={HEADER: stolen})
    assert response.status_code == 403
    assert stored_text(session, layer) == "1 in 10"


def test_a_plain_form_carries_the_token_as_a_hidden_field(
    client: TestClient, session: Session, layer: Step
) -> None:
    token = client.headers.pop(HEADER)
    response = client.post(f"/studies/{layer.study_id}/steps/{layer.id}",
                           data={"value_text": "1 in 1000", FIELD: token},
                           headers={"Origin": "http://testserver"}, follow_redirects=False)
    assert response.status_code == 303
    assert stored_text(session, layer) == "1 in 1000"


def test_every_post_form_on_the_worksheet_carries_the_hidden_token(
    client: TestClient, session: Session, layer: Step
) -> None:
    page = client.get(f"/studies/{layer.study_id}/worksheet").text
    forms = page.count('method="post"')
    assert forms >= 5
    assert page.count(f'name="{FIELD}" value="{client.headers[HEADER]}"') == forms
