"""An answer while another write holds an SQLite database longer than a request may wait.

A large import or rebuild writes in one transaction; SQLite lets one writer in at a time, and
a request waits `sqlite_busy_seconds` (settings) for it. Past that, the request is answered
503 with a Retry-After and a sentence saying nothing was saved, never a server error; the
worksheet sends a value again by itself (tests/browser/worksheet/test_busy_database.py).
The other writer is a plain connection holding the write lock (BEGIN IMMEDIATE), and the app
waits 0.2 s instead of 5 so the test is quick.
"""

import sqlite3
from collections.abc import Iterator

import pytest
from fastapi.testclient import TestClient
from sqlalchemy import Engine
from sqlalchemy.exc import OperationalError
from sqlmodel import Session

import app.routes.worksheet.page as page_routes
from app.db.models import Step
from tests.factories import make_scenario_tree, make_step
from tests.helpers import HX, another_writer, waiting_less_for_writers

WAIT_SECONDS = 0.2


@pytest.fixture
def impatient_app(db_engine: Engine, monkeypatch: pytest.MonkeyPatch) -> Iterator[Engine]:
    """The app's requests on an engine that waits WAIT_SECONDS for another writer."""
    yield from waiting_less_for_writers(db_engine, monkeypatch, WAIT_SECONDS)


@pytest.fixture
def step(session: Session) -> Step:
    return make_step(session, make_scenario_tree(session), value=0.1, value_text="1 in 10")


def stored_text(db_engine: Engine, step: Step) -> str:
    with Session(db_engine) as fresh:
        row = fresh.get(Step, step.id)
        assert row is not None
        return row.value_text


@pytest.mark.usefixtures("impatient_app")
def test_a_keystroke_while_another_write_holds_the_database_is_answered_busy_not_an_error(
    client: TestClient, db_engine: Engine, step: Step,
) -> None:
    url = f"/studies/{step.study_id}/steps/{step.id}/value"
    sent = {"value_text": "1 in 1000", "client": "page-under-test", "seq": "1"}
    with another_writer(db_engine):
        answer = client.post(url, data=sent, headers={
            **HX, "HX-Trigger": f"step-{step.id}-value_text", "HX-Trigger-Name": "value_text"})
    assert answer.status_code == 503
    assert answer.headers["Retry-After"] == "2"
    assert "busy" in answer.text and "nothing was saved" in answer.text
    assert 'data-error-message' in answer.text
    assert stored_text(db_engine, step) == "1 in 10"
    again = client.post(url, data={**sent, "seq": "2"}, headers=HX)  # the page sends it again
    assert again.status_code == 200
    assert stored_text(db_engine, step) == "1 in 1000"


@pytest.mark.usefixtures("impatient_app")
def test_a_browser_gets_a_page_and_an_api_client_json_saying_busy(
    client: TestClient, db_engine: Engine, step: Step,
) -> None:
    url = f"/studies/{step.study_id}/steps/{step.id}/value"
    with another_writer(db_engine):
        page = client.post(url, data={"value_text": "1 in 1000"},
                           headers={"Accept": "text/html"})
        json_answer = client.post(url, data={"value_text": "1 in 1000"},
                                  headers={"Accept": "application/json"})
    assert page.status_code == json_answer.status_code == 503
    assert "<html" in page.text and "Busy" in page.text and "nothing was saved" in page.text
    assert json_answer.json()["detail"] == (
        "The database is busy writing another large change (such as an import) and did not "
        "take this one within 5 seconds; nothing was saved. Try again in a moment.")  # the setting
    assert stored_text(db_engine, step) == "1 in 10"


def test_any_other_database_error_is_still_a_server_error(
    client: TestClient, step: Step, monkeypatch: pytest.MonkeyPatch,
) -> None:
    """Only 'busy' is answered 503: a broken statement must not pass for a busy database."""



    def broken(**_: object) -> None:
        raise OperationalError("SELECT nothing", {}, sqlite3.OperationalError("no such table"))

    monkeypatch.setattr(page_routes, "edit_step_value", broken)
    with pytest.raises(OperationalError):
        client.post(f"/studies/{step.study_id}/steps/{step.id}/value",
                    data={"value_text": "1 in 1000"}, headers=HX)
