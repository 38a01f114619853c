"""Two people on one step's details form: a save sends the version the form was loaded with and
only the fields the person changed; the later save of the same field gets 409 with the other
person's value, who saved it and when, at that field, and "keep mine" / "take theirs" (logged)."""

import html
import re

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, col, select

from app.db.models import ChangeLogEntry, Step
from tests.factories import make_scenario_tree, make_step
from tests.helpers import HX, OTHER_AUTHOR, TEST_AUTHOR, reloaded, text_of

_HIDDEN = re.compile(r'<input type="hidden" name="([^"]+)" value="([^"]*)"')




@pytest.fixture
def step(session: Session) -> Step:
    """An IPL with a layer type and a basis (invented)."""
    return make_step(session, make_scenario_tree(session), value=0.1, description="Level alarm",
                     ipl_type="operator_response", basis="Alarm LAH-1 (invented)")


def url(step: Step) -> str:
    return f"/studies/{step.study_id}/steps/{step.id}/details"


def loaded_form(http: TestClient, step: Step) -> dict[str, str]:
    """The form as the page holds it: every field as loaded, the version and the originals."""
    page = http.get(url(step)).text
    hidden = {name: html.unescape(value) for name, value in _HIDDEN.findall(page)
              if name != "csrf_token"}
    typed = {name.removeprefix("orig_"): value for name, value in hidden.items()
             if name.startswith("orig_")}
    return {**typed, **hidden}


@pytest.mark.parametrize("first_is_ben", [False, True])
def test_the_second_save_of_one_field_gets_409_at_that_field(
    client: TestClient, ben: TestClient, session: Session, step: Step, first_is_ben: bool,
) -> None:
    first, second = (ben, client) if first_is_ben else (client, ben)
    first_name = OTHER_AUTHOR if first_is_ben else TEST_AUTHOR
    first_form, second_form = loaded_form(first, step), loaded_form(second, step)

    saved = first.post(url(step), data={**first_form, "basis": "Trip test record 12 (invented)"})
    assert saved.status_code == 200
    reply = second.post(url(step), data={**second_form, "basis": "Vendor data (invented)"},
                        headers=HX)

    assert reply.status_code == 409
    assert reloaded(session, Step, step.id).basis == "Trip test record 12 (invented)"
    box = text_of(reply.text, "basis-conflict")
    assert box.startswith(f"⚠ Basis was changed by {first_name} at ")
    assert "Theirs: Trip test record 12 (invented) · yours: Vendor data (invented)" in box
    assert "Nothing was saved." in box
    assert re.findall(r'data-resolve="(\w+)">([^<]+)</button>', reply.text) == [
        ("keep", "Keep mine"), ("take", "Take theirs")]
    # The typed text stays in the field; no other field carries a box.
    assert ">Vendor data (invented)</textarea>" in reply.text
    assert reply.text.count("data-conflict") == 1


@pytest.mark.parametrize("first_is_ben", [False, True])
def test_a_whole_form_save_keeps_the_field_the_other_person_changed(
    client: TestClient, ben: TestClient, session: Session, step: Step, first_is_ben: bool,
) -> None:
    first, second = (ben, client) if first_is_ben else (client, ben)
    first_form, second_form = loaded_form(first, step), loaded_form(second, step)

    assert first.post(url(step), data={**first_form, "system_tag": "DCS-1"}).status_code == 200
    reply = second.post(url(step), data={**second_form, "crew": "Shift A (invented)"})

    assert reply.status_code == 200
    row = reloaded(session, Step, step.id)
    assert (row.system_tag, row.crew, row.basis) == ("DCS-1", "Shift A (invented)",
                                                     "Alarm LAH-1 (invented)")


def test_a_choice_conflict_names_the_choices_then_keep_mine_and_take_theirs_are_logged(
    client: TestClient, ben: TestClient, session: Session, step: Step,
) -> None:
    ada_form, ben_form = loaded_form(client, step), loaded_form(ben, step)
    client.post(url(step), data={**ada_form, "ipl_type": "relief_device"})

    reply = ben.post(url(step), data={**ben_form, "ipl_type": "bpcs"})

    assert reply.status_code == 409
    assert ("Theirs: Relief device · yours: BPCS loop (basic process control system)"
            in text_of(reply.text, "ipl_type-conflict"))
    again = {**ben_form, "ipl_type": "bpcs", "seen_ipl_type": "relief_device"}
    assert ben.post(url(step), data={**again, "resolution": "take"}).status_code == 200
    assert reloaded(session, Step, step.id).ipl_type == "relief_device"
    assert ben.post(url(step), data={**again, "resolution": "keep"}).status_code == 200
    assert reloaded(session, Step, step.id).ipl_type == "bpcs"
    choices = session.exec(select(ChangeLogEntry).where(ChangeLogEntry.action == "conflict")
                           .order_by(col(ChangeLogEntry.id))).all()
    assert [(c.author, c.field, c.old_value, c.new_value) for c in choices] == [
        (OTHER_AUTHOR, "ipl_type", "relief_device", "relief_device"),
        (OTHER_AUTHOR, "ipl_type", "relief_device", "bpcs")]


def test_the_conflict_form_sends_the_pages_version_and_originals_again(
    client: TestClient, ben: TestClient, step: Step,
) -> None:
    """The 409 page keeps what the page knew, so "keep mine" is judged against it."""
    ada_form, ben_form = loaded_form(client, step), loaded_form(ben, step)
    client.post(url(step), data={**ada_form, "basis": "Ada's basis (invented)"})

    reply = ben.post(url(step), data={**ben_form, "basis": "Ben's basis (invented)"}).text

    hidden = dict(_HIDDEN.findall(reply))
    assert hidden["version"] == ben_form["version"]
    assert html.unescape(hidden["orig_basis"]) == "Alarm LAH-1 (invented)"
    assert html.unescape(hidden["seen_basis"]) == "Ada's basis (invented)"


def test_saving_details_of_a_step_someone_deleted_says_who_and_when(
    client: TestClient, ben: TestClient, step: Step,
) -> None:
    """Not a silent 404: the form's place shows who deleted the step, when, and that undo
    can bring it back (the worksheet's delete keeps it in the undo store)."""
    form = loaded_form(client, step)
    deleted = ben.post(f"/studies/{step.study_id}/steps/{step.id}/delete", headers=HX)
    assert deleted.status_code == 200

    reply = client.post(url(step), data={**form, "basis": "Too late (invented)"}, headers=HX)

    assert reply.status_code == 409
    assert "<html" not in reply.text  # the message takes the form's place
    message = text_of(reply.text, "error-message")
    assert f"This step was deleted by {OTHER_AUTHOR} at " in message
    assert "Undo is available" in message and "Your changes were not saved." in message
    page = client.get(url(step))
    assert page.status_code == 404
    assert f"This step was deleted by {OTHER_AUTHOR}" in text_of(page.text, "error-message")
