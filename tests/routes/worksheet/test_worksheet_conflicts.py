"""Two people on one worksheet: nothing anyone typed is overwritten without them seeing it.

Every save sends the row's version and the field's value as the page loaded them; the later of
two saves of the same field gets 409 with both values, who saved first and when, and a choice
of "keep mine" / "take theirs" (both logged). Saves of different fields, and whole-row forms,
keep the other person's work.
"""

import html
import re

import pytest
from fastapi.testclient import TestClient
from httpx import Response
from sqlmodel import Session, col, select

from app.db.models import ChangeLogEntry, Scenario, Step, Study
from tests.factories import make_category, make_scenario_tree, make_step
from tests.helpers import HX, OTHER_AUTHOR, TEST_AUTHOR, attrs_of, text_of

_HIDDEN = re.compile(r'<input type="hidden" name="([^"]+)" value="([^"]*)"')




@pytest.fixture
def scenario(session: Session) -> Scenario:
    scenario = make_scenario_tree(session)
    scenario.cause = "Pump P-1 stops (invented)"
    session.add(scenario)
    session.commit()
    session.refresh(scenario)
    return scenario


def loaded(http: TestClient, row: Scenario | Step, field_id: str, row_key: str) -> dict[str, str]:
    """What a page holds for one field: the row's version and the field's value as loaded."""
    page = http.get(f"/studies/{row.study_id}/worksheet", follow_redirects=True).text
    return {"version": attrs_of(page, f"{row_key}-version")["value"],
            "orig": attrs_of(page, f"{field_id}-orig")["value"]}


def save_cause(http: TestClient, scenario: Scenario, text: str, page: dict[str, str]) -> Response:
    return http.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}",
                     data={"cause": text, "orig_cause": page["orig"], "version": page["version"]},
                     headers=HX)


def stored_cause(session: Session, scenario: Scenario) -> str:
    session.expire_all()
    row = session.get(Scenario, scenario.id)
    assert row is not None
    return row.cause


def choice_form(reply: str, choice: str) -> dict[str, str]:
    """The hidden fields of the "keep mine" or "take theirs" form in a 409 reply."""
    for form in reply.split("<form")[1:]:
        if f'name="resolution" value="{choice}"' in form:
            return {name: html.unescape(value) for name, value in _HIDDEN.findall(form)
                    if name != "csrf_token"}
    raise AssertionError(f"no '{choice}' form in the reply")


@pytest.mark.parametrize("first_is_ben", [False, True])
def test_the_second_save_of_one_field_gets_409_with_both_values(
    client: TestClient, ben: TestClient, session: Session, scenario: Scenario,
    first_is_ben: bool,
) -> None:
    fid = f"sc-{scenario.id}-cause"
    first, second = (ben, client) if first_is_ben else (client, ben)
    first_name = OTHER_AUTHOR if first_is_ben else TEST_AUTHOR
    first_page, second_page = (loaded(h, scenario, fid, f"sc-{scenario.id}")
                               for h in (first, second))

    saved = save_cause(first, scenario, "Pump P-1 trips on low suction", first_page)
    assert saved.status_code == 200
    reply = save_cause(second, scenario, "Pump P-1 stopped by operator", second_page)

    assert reply.status_code == 409
    assert reply.headers["HX-Retarget"] == f"#{fid}-said"
    assert stored_cause(session, scenario) == "Pump P-1 trips on low suction"
    said = text_of(reply.text, f"{fid}-said")
    assert f"Changed by {first_name}" in said
    assert "Theirs: Pump P-1 trips on low suction · yours: Pump P-1 stopped by operator" in said
    assert re.findall(r'data-resolve="(\w+)"[^>]*>([^<]+)</button>', reply.text) == [
        ("keep", "Keep mine"), ("take", "Take theirs")]


def test_keep_mine_saves_over_theirs_and_is_logged(
    client: TestClient, ben: TestClient, session: Session, scenario: Scenario,
) -> None:
    fid = f"sc-{scenario.id}-cause"
    ada_page, ben_page = (loaded(h, scenario, fid, f"sc-{scenario.id}") for h in (client, ben))
    save_cause(client, scenario, "Ada's cause", ada_page)
    conflict = save_cause(ben, scenario, "Ben's cause", ben_page)

    kept = ben.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}",
                    data=choice_form(conflict.text, "keep"), headers=HX)

    assert kept.status_code == 200
    assert stored_cause(session, scenario) == "Ben's cause"
    entry = session.exec(select(ChangeLogEntry).where(ChangeLogEntry.action == "conflict")).one()
    assert (entry.author, entry.field, entry.old_value, entry.new_value) == (
        OTHER_AUTHOR, "cause", "Ada's cause", "Ben's cause")
    assert "kept their own value" in entry.summary


def test_take_theirs_keeps_theirs_and_is_logged(
    client: TestClient, ben: TestClient, session: Session, scenario: Scenario,
) -> None:
    fid = f"sc-{scenario.id}-cause"
    ada_page, ben_page = (loaded(h, scenario, fid, f"sc-{scenario.id}") for h in (client, ben))
    save_cause(client, scenario, "Ada's cause", ada_page)
    conflict = save_cause(ben, scenario, "Ben's cause", ben_page)

    taken = ben.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}",
                     data=choice_form(conflict.text, "take"), headers=HX)

    assert taken.status_code == 200
    assert stored_cause(session, scenario) == "Ada's cause"
    entry = session.exec(select(ChangeLogEntry).where(ChangeLogEntry.action == "conflict")).one()
    assert (entry.author, entry.new_value) == (OTHER_AUTHOR, "Ada's cause")
    assert "took the other person's value" in entry.summary


def test_saves_of_different_fields_of_one_row_both_stay(
    client: TestClient, ben: TestClient, session: Session, scenario: Scenario,
) -> None:
    ada_page = loaded(client, scenario, f"sc-{scenario.id}-cause", f"sc-{scenario.id}")
    ben_page = loaded(ben, scenario, f"sc-{scenario.id}-consequence", f"sc-{scenario.id}")
    save_cause(client, scenario, "Ada's cause", ada_page)

    reply = ben.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}",
                     data={"consequence": "Ben's consequence",
                           "orig_consequence": ben_page["orig"],
                           "version": ben_page["version"]}, headers=HX)

    assert reply.status_code == 200
    session.expire_all()
    row = session.get(Scenario, scenario.id)
    assert row is not None and (row.cause, row.consequence) == ("Ada's cause", "Ben's consequence")
    # Ben's page has not seen Ada's cause: its version stays, so a later cause edit still asks.
    assert f'id="sc-{scenario.id}-version"' not in reply.text
    again = save_cause(ben, scenario, "Ben's cause",
                       {**ben_page, "orig": "Pump P-1 stops (invented)"})
    assert again.status_code == 409


def test_a_whole_row_form_saves_only_the_fields_the_person_changed(
    client: TestClient, ben: TestClient, session: Session, scenario: Scenario,
) -> None:
    """Without JavaScript the whole row is posted; untouched fields must not put back old text."""
    version = loaded(ben, scenario, f"sc-{scenario.id}-cause", f"sc-{scenario.id}")["version"]
    ada_page = loaded(client, scenario, f"sc-{scenario.id}-cause", f"sc-{scenario.id}")
    save_cause(client, scenario, "Ada's cause", ada_page)

    reply = ben.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}", data={
        "version": version, "cause": "Pump P-1 stops (invented)",
        "orig_cause": "Pump P-1 stops (invented)", "consequence": "Ben's consequence",
        "orig_consequence": "Overfill and spill",
        "severity_category_id": str(scenario.severity_category_id),
        "orig_severity_category_id": str(scenario.severity_category_id)},
        follow_redirects=False)

    assert reply.status_code == 303
    session.expire_all()
    row = session.get(Scenario, scenario.id)
    assert row is not None and (row.cause, row.consequence) == ("Ada's cause", "Ben's consequence")


def test_a_whole_row_form_over_a_changed_field_shows_the_conflict_on_the_page(
    client: TestClient, ben: TestClient, session: Session, scenario: Scenario,
) -> None:
    version = loaded(ben, scenario, f"sc-{scenario.id}-cause", f"sc-{scenario.id}")["version"]
    save_cause(client, scenario, "Ada's cause",
               loaded(client, scenario, f"sc-{scenario.id}-cause", f"sc-{scenario.id}"))

    reply = ben.post(f"/studies/{scenario.study_id}/scenarios/{scenario.id}", data={
        "version": version, "cause": "Ben's cause", "orig_cause": "Pump P-1 stops (invented)"})

    assert reply.status_code == 409
    said = text_of(reply.text, "worksheet-conflict")
    assert "Ada's cause" in said and "Ben's cause" in said and TEST_AUTHOR in said
    assert stored_cause(session, scenario) == "Ada's cause"


def test_two_people_typing_one_value_the_second_gets_409(
    client: TestClient, ben: TestClient, session: Session, scenario: Scenario,
) -> None:
    layer = make_step(session, scenario, value=0.1, value_text="1 in 10", description="Trip")
    fid = f"step-{layer.id}-value_text"
    ada_page, ben_page = (loaded(h, layer, fid, f"step-{layer.id}") for h in (client, ben))
    url = f"/studies/{layer.study_id}/steps/{layer.id}/value"

    ada = client.post(url, data={"value_text": "0.01", "client": "ada-page", "seq": "1",
                                 "version": ada_page["version"],
                                 "orig_value_text": ada_page["orig"]}, headers=HX)
    ben_reply = ben.post(url, data={"value_text": "0.05", "client": "ben-page", "seq": "1",
                                    "version": ben_page["version"],
                                    "orig_value_text": ben_page["orig"]}, headers=HX)

    assert ada.status_code == 200 and ben_reply.status_code == 409
    said = text_of(ben_reply.text, f"{fid}-said")
    assert "0.01" in said and "0.05" in said and TEST_AUTHOR in said
    session.expire_all()
    assert session.get(Step, layer.id).value_text == "0.01"  # type: ignore[union-attr]


def test_ones_own_keystrokes_in_flight_are_no_conflict(
    client: TestClient, session: Session, scenario: Scenario,
) -> None:
    """The page sends its next keystroke before the reply to the last one has come back."""
    layer = make_step(session, scenario, value=0.1, value_text="1 in 10", description="Trip")
    page = loaded(client, layer, f"step-{layer.id}-value_text", f"step-{layer.id}")
    url = f"/studies/{layer.study_id}/steps/{layer.id}/value"
    for seq, text in enumerate(["0.0", "0.01", "0.015"], start=1):
        reply = client.post(url, data={"value_text": text, "client": "one-page", "seq": str(seq),
                                       "version": page["version"],
                                       "orig_value_text": page["orig"]}, headers=HX)
        assert reply.status_code in (200, 422), reply.text
    session.expire_all()
    assert session.get(Step, layer.id).value_text == "0.015"  # type: ignore[union-attr]


def test_an_edit_of_a_deleted_row_says_who_deleted_it_and_that_undo_is_available(
    client: TestClient, ben: TestClient, session: Session, scenario: Scenario,
) -> None:
    layer = make_step(session, scenario, value=0.1, value_text="1 in 10", description="Trip")
    page = loaded(ben, layer, f"step-{layer.id}-value_text", f"step-{layer.id}")
    assert client.post(f"/studies/{layer.study_id}/steps/{layer.id}/delete",
                       headers=HX).status_code == 200

    reply = ben.post(f"/studies/{layer.study_id}/steps/{layer.id}/value",
                     data={"value_text": "0.01", "version": page["version"]}, headers=HX)

    assert reply.status_code == 409
    said = text_of(reply.text, f"step-{layer.id}-value_text-said")
    assert f"deleted by {TEST_AUTHOR}" in said
    assert "Undo is available" in said
    text_edit = ben.post(f"/studies/{layer.study_id}/steps/{layer.id}",
                         data={"basis": "vendor data"}, headers=HX)
    assert text_edit.status_code == 409
    assert f"deleted by {TEST_AUTHOR}" in text_of(text_edit.text, f"step-{layer.id}-basis-said")
    entries = session.exec(select(ChangeLogEntry).order_by(col(ChangeLogEntry.id))).all()
    assert not [e for e in entries if e.action == "edit" and e.entity_id == layer.id
                and e.field in ("value_text", "basis")]


@pytest.mark.parametrize("first_is_ben", [False, True])
def test_a_rating_conflict_names_the_categories_not_their_ids(
    client: TestClient, ben: TestClient, session: Session, scenario: Scenario,
    first_is_ben: bool,
) -> None:
    """The box shows 'Major (invented)', never the row id the select sends."""
    study = session.get(Study, scenario.study_id)
    assert study is not None
    major = make_category(session, study, name="Major (invented)", tolerable_frequency=1e-6)
    minor = make_category(session, study, name="Minor (invented)", tolerable_frequency=1e-3)
    fid = f"sc-{scenario.id}-severity_category_id"
    first, second = (ben, client) if first_is_ben else (client, ben)
    pages = [loaded(h, scenario, fid, f"sc-{scenario.id}") for h in (first, second)]
    url = f"/studies/{scenario.study_id}/scenarios/{scenario.id}"

    def rate(http: TestClient, category_id: int | None, page: dict[str, str]) -> Response:
        return http.post(url, headers=HX, data={
            "severity_category_id": str(category_id), "version": page["version"],
            "orig_severity_category_id": page["orig"]})

    assert rate(first, major.id, pages[0]).status_code == 200
    reply = rate(second, minor.id, pages[1])

    assert reply.status_code == 409
    said = text_of(reply.text, f"{fid}-said")
    assert "Theirs: Major (invented) · yours: Minor (invented)" in said
    assert f"Theirs: {major.id}" not in said
    # The choice still sends the id, which the select understands.
    assert choice_form(reply.text, "take")["severity_category_id"] == str(minor.id)
    assert choice_form(reply.text, "take")["orig_severity_category_id"] == str(major.id)
