"""The change log's "who": asked once per browser, then remembered in its session."""

from fastapi.testclient import TestClient
from sqlmodel import Session

from tests.helpers import attrs_of, text_of
from tests.security.sessions import attach_token


def test_a_browser_without_a_name_is_asked_for_one(client: TestClient, session: Session) -> None:
    client.cookies.clear()  # a new browser: a new session, without a name
    page = client.get("/").text
    assert "author-missing" in attrs_of(page, "author-form")["class"]
    assert text_of(page, "author-form").startswith("Who is typing?")


def test_the_name_is_remembered_and_the_user_returns_to_the_page(
    client: TestClient, session: Session
) -> None:
    client.cookies.clear()
    attach_token(client)
    response = client.post("/author", data={"name": "  R. Okoye  ", "next": "/studies/7"},
                           follow_redirects=False)
    assert response.status_code == 303
    assert response.headers["location"] == "/studies/7"
    page = client.get("/").text
    assert "author-missing" not in attrs_of(page, "author-form")["class"]
    assert attrs_of(page, "author-name")["value"] == "R. Okoye"


def test_a_crafted_next_address_never_leaves_the_site(client: TestClient, session: Session) -> None:
    response = client.post("/author", data={"name": "X", "next": "//elsewhere.example/"},
                           follow_redirects=False)
    assert response.headers["location"] == "/"


def test_an_empty_name_is_refused(client: TestClient, session: Session) -> None:
    assert client.post("/author", data={"name": ""}).status_code == 422
