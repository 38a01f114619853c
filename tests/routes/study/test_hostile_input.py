"""Hostile input gets a clear refusal, never a server error: one regression test per crash
class the fuzzing tests found (tests/fuzz)."""

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.ids import MAX_ROW_ID, read_row_id
from app.db.models import ChangeLogEntry, Node, Participant, Scenario
from tests.factories import make_scenario_tree
from tests.helpers import HX
from tests.security.sessions import attach_token

IMPOSSIBLE_IDS = ["\u0661", "\u00b2", str(MAX_ROW_ID + 1), str(2**63), "0", "-1", "1.0", "abc"]


@pytest.fixture
def scenario(session: Session) -> Scenario:
    return make_scenario_tree(session)


def test_the_id_reader_takes_only_ascii_digits_in_the_database_range() -> None:
    assert read_row_id(" 42 ") == 42 and read_row_id(str(MAX_ROW_ID)) == MAX_ROW_ID
    assert [read_row_id(text) for text in IMPOSSIBLE_IDS] == [None] * len(IMPOSSIBLE_IDS)


@pytest.mark.parametrize("bad", IMPOSSIBLE_IDS)
def test_a_page_with_an_impossible_id_is_not_understood(
    client: TestClient, scenario: Scenario, bad: str
) -> None:
    for url in (f"/studies/{bad}", f"/studies/{scenario.study_id}/nodes/{bad}",
                f"/studies/{scenario.study_id}/revisions/{bad}"):
        response = client.get(url)
        assert response.status_code == 400, url
        assert "ASCII digits" in response.text


@pytest.mark.parametrize("bad", IMPOSSIBLE_IDS)
def test_a_write_with_an_impossible_id_is_refused_with_the_rule(
    client: TestClient, scenario: Scenario, bad: str
) -> None:
    response = client.post(f"/studies/{scenario.study_id}/scenarios/{bad}", data={"cause": "x"})
    assert response.status_code == 422
    assert response.json()["detail"][0]["loc"] == ["path", "row_id"]


@pytest.mark.parametrize(("url", "data"), [
    ("/studies/{study}/focus", {"scenario_id": str(2**63)}),
    ("/studies/{study}/proof-test", {"step_id": "\u00b2"}),
    ("/studies/{study}/nodes", {"name": "N", "after_id": "\u00b2"}),
    ("/studies/{study}/attendance/marks", {"present": f"{2**63}:1"}),
    ("/studies", {"title": "T", "revision_label": "A", "criteria_from": "\u00b2"}),
    ("/studies", {"title": "T", "revision_label": "A", "criteria_from": "9" * 5000}),
    ("/studies/{study}/edit", {"title": "T", "revision_label": "A", "version": "\u00b2"}),
])
def test_impossible_ids_in_forms_never_reach_the_database(
    client: TestClient, scenario: Scenario, url: str, data: dict[str, str]
) -> None:
    response = client.post(url.format(study=scenario.study_id), data=data,
                           follow_redirects=False)
    assert response.status_code < 500


@pytest.mark.parametrize("bad", [*IMPOSSIBLE_IDS, "9" * 5000])
def test_the_node_picker_ignores_an_impossible_node(
    client: TestClient, scenario: Scenario, bad: str
) -> None:
    response = client.get(f"/studies/{scenario.study_id}/worksheet?node={bad}",
                          follow_redirects=False)
    assert response.status_code == 303  # to the first node, as with no choice


@pytest.mark.parametrize("query", [f"step_id={2**63}", "step_id=\u0661"])
def test_impossible_ids_in_queries_are_refused(
    client: TestClient, scenario: Scenario, query: str
) -> None:
    assert client.get(f"/studies/{scenario.study_id}/proof-test?{query}").status_code == 422


@pytest.mark.parametrize("query", [f"scenario_id={2**63}", "scenario_id=\u0661",
                                   f"node_id={2**63}"])
def test_an_impossible_change_log_filter_is_refused_naming_the_rule(
    client: TestClient, scenario: Scenario, query: str
) -> None:
    for page in ("changes", "changes.csv"):
        response = client.get(f"/studies/{scenario.study_id}/{page}?{query}")
        assert response.status_code == 422
        assert "must be chosen from the list" in response.text


@pytest.mark.parametrize("name", ["Ŝtefan Łukasz", "李小龍", "Αθηνά", "أمينة", "😀 Kai"])
def test_author_names_in_any_script_are_remembered_and_logged(
    client: TestClient, session: Session, scenario: Scenario, name: str
) -> None:
    client.cookies.clear()  # a new browser: a new session
    attach_token(client)
    assert client.post("/author", data={"name": name}, follow_redirects=False).status_code == 303
    assert f'value="{name}"' in client.get("/").text
    node = session.exec(select(Node).where(Node.study_id == scenario.study_id)).one()
    client.post(f"/studies/{scenario.study_id}/nodes/{node.id}", data={"name": "Renamed"})
    authors = session.exec(select(ChangeLogEntry.author)).all()
    assert name in authors


def test_control_characters_in_the_name_are_dropped(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    assert client.post("/author", data={"name": "Ana\x00\x01 B"},
                       follow_redirects=False).status_code == 303
    node = session.exec(select(Node).where(Node.study_id == scenario.study_id)).one()
    client.post(f"/studies/{scenario.study_id}/nodes/{node.id}", data={"name": "Renamed"})
    assert "Ana B" in session.exec(select(ChangeLogEntry.author)).all()


@pytest.mark.parametrize(("url", "data", "field"), [
    ("/studies/{study}/nodes/{node}", {"name": "Feed\x00drum"}, "name"),
    ("/studies/{study}/attendance/participants", {"name": "A\x00B"}, "name"),
    ("/studies/{study}/actions", {"text": "Fix\x00it"}, "text"),
    ("/studies/{study}/criteria/basis", {"criteria_basis": "x\x00"}, "criteria_basis"),
])
def test_nul_is_refused_in_every_text_field_with_the_rule(
    client: TestClient, session: Session, scenario: Scenario, url: str, data: dict[str, str],
    field: str,
) -> None:
    node = session.exec(select(Node).where(Node.study_id == scenario.study_id)).one()
    response = client.post(url.format(study=scenario.study_id, node=node.id), data=data)
    assert response.status_code == 422
    assert "must not contain the NUL control character" in response.text
    session.expire_all()
    assert session.exec(select(Participant)).all() == []
    assert session.get(Node, node.id).name == "Feed drum"  # type: ignore[union-attr]


def test_a_value_text_sent_to_a_row_without_one_is_ignored(
    client: TestClient, scenario: Scenario
) -> None:
    response = client.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}",
                           data={"value_text": "0.1"}, headers=HX)
    assert response.status_code == 200


def test_bidirectional_controls_are_isolated_where_text_is_shown(
    client: TestClient, session: Session, scenario: Scenario
) -> None:
    node = session.exec(select(Node).where(Node.study_id == scenario.study_id)).one()
    client.post(f"/studies/{scenario.study_id}/nodes/{node.id}", data={"name": "\u202eevil"})
    page = client.get(f"/studies/{scenario.study_id}/nodes/{node.id}").text
    # First-strong isolate, the text with its override closed (PDF), pop isolate.
    assert "\u2068\u202eevil\u202c\u2069" in page
    assert "\u202eevil\u202c\u2069" not in page.replace("\u2068\u202eevil\u202c\u2069", "")


@pytest.mark.parametrize("name", ["李小龍", "أمينة", "😀 Kai"])
def test_participant_names_in_any_script_are_kept_and_exported(
    client: TestClient, session: Session, scenario: Scenario, name: str
) -> None:
    study = scenario.study_id
    response = client.post(f"/studies/{study}/attendance/participants", data={"name": name},
                           follow_redirects=False)
    assert response.status_code == 303
    assert name in client.get(f"/studies/{study}/attendance").text
    assert name in client.get(f"/studies/{study}/export.json").content.decode("utf-8")
