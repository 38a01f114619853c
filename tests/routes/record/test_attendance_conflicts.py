"""Two people editing one participant or one session date: each save sends the version its form
was loaded with and writes only the fields the person changed; the later save of the same field
gets 409 with the other person's value, who saved it and when, and "keep mine" / "take theirs"
(both logged)."""

import html
import re
from datetime import date

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, col, select

from app.db.models import Attendance, ChangeLogEntry, Participant, SessionDay
from tests.factories import make_study
from tests.helpers import HX, OTHER_AUTHOR, TEST_AUTHOR, reloaded, text_of

_INPUT = re.compile(r'<input\b[^>]*\bname="([^"]+)"[^>]*\bvalue="([^"]*)"')




@pytest.fixture
def person(session: Session) -> Participant:
    study = make_study(session)
    row = Participant(study_id=study.id, name="Dana Field (invented)", role="Operator",
                      discipline="Operations", company="Plantco (invented)")
    session.add(row)
    session.commit()
    session.refresh(row)
    return row


@pytest.fixture
def day(session: Session) -> SessionDay:
    study = make_study(session)
    row = SessionDay(study_id=study.id, day=date(2026, 3, 2), note="Nodes 1 and 2")
    session.add(row)
    session.commit()
    session.refresh(row)
    return row


def open_form(page: str) -> dict[str, str]:
    """The open edit form's fields as the page holds them (typed fields, version, originals,
    and after a conflict the values it showed)."""
    start = page.index('<tr class="editing"')
    form = page[start:page.index("</form>", start)]
    return {name: html.unescape(value) for name, value in _INPUT.findall(form)
            if name != "csrf_token"}


def edit_form(http: TestClient, path: str) -> dict[str, str]:
    return open_form(http.get(path).text)


def person_form(http: TestClient, person: Participant) -> dict[str, str]:
    return edit_form(http, f"/studies/{person.study_id}/attendance/participants/"
                           f"{person.id}/edit")


def save_person(http: TestClient, person: Participant, form: dict[str, str]) -> str:
    reply = http.post(f"/studies/{person.study_id}/attendance/participants/{person.id}",
                      data=form, headers=HX)
    return f"{reply.status_code} {reply.text}"


@pytest.mark.parametrize("first_is_ben", [False, True])
def test_the_second_save_of_a_participants_field_gets_409_with_both_values(
    client: TestClient, ben: TestClient, session: Session, person: Participant,
    first_is_ben: bool,
) -> None:
    first, second = (ben, client) if first_is_ben else (client, ben)
    first_name = OTHER_AUTHOR if first_is_ben else TEST_AUTHOR
    first_form, second_form = person_form(first, person), person_form(second, person)
    assert first_form["version"] == str(person.version)

    assert save_person(first, person, {**first_form, "role": "Shift lead"}).startswith("200")
    reply = save_person(second, person, {**second_form, "role": "Panel operator"})

    assert reply.startswith("409")
    assert reloaded(session, Participant, person.id).role == "Shift lead"
    box = text_of(reply, "edit-person-conflict")
    assert f"Role was changed by {first_name}" in box
    assert "Theirs: Shift lead · yours: Panel operator" in box and "Nothing was saved." in box
    assert 'value="Panel operator"' in reply  # the typed text stays in the field
    assert re.findall(r'data-resolve="(\w+)">([^<]+)</button>', reply) == [
        ("keep", "Keep mine"), ("take", "Take theirs")]


@pytest.mark.parametrize("first_is_ben", [False, True])
def test_a_participant_save_keeps_the_field_the_other_person_changed(
    client: TestClient, ben: TestClient, session: Session, person: Participant,
    first_is_ben: bool,
) -> None:
    first, second = (ben, client) if first_is_ben else (client, ben)
    first_form, second_form = person_form(first, person), person_form(second, person)

    assert save_person(first, person, {**first_form, "role": "Shift lead"}).startswith("200")
    assert save_person(second, person, {**second_form, "company": "Other Co"}).startswith("200")

    row = reloaded(session, Participant, person.id)
    assert (row.role, row.company, row.name) == (
        "Shift lead", "Other Co", "Dana Field (invented)")


def test_keep_mine_and_take_theirs_on_a_participant_are_logged(
    client: TestClient, ben: TestClient, session: Session, person: Participant,
) -> None:
    ada_form, ben_form = person_form(client, person), person_form(ben, person)
    save_person(client, person, {**ada_form, "role": "Shift lead"})
    conflict = save_person(ben, person, {**ben_form, "role": "Panel operator"})
    resend = open_form(conflict)
    assert resend["seen_role"] == "Shift lead" and resend["version"] == ben_form["version"]

    assert save_person(ben, person, {**resend, "resolution": "take"}).startswith("200")
    assert reloaded(session, Participant, person.id).role == "Shift lead"
    assert save_person(ben, person, {**resend, "resolution": "keep"}).startswith("200")
    assert reloaded(session, Participant, person.id).role == "Panel operator"
    choices = session.exec(select(ChangeLogEntry).where(ChangeLogEntry.action == "conflict")
                           .order_by(col(ChangeLogEntry.id))).all()
    assert [(c.author, c.entity, c.old_value, c.new_value) for c in choices] == [
        (OTHER_AUTHOR, "participant", "Shift lead", "Shift lead"),
        (OTHER_AUTHOR, "participant", "Shift lead", "Panel operator")]


@pytest.mark.parametrize("first_is_ben", [False, True])
def test_the_second_save_of_a_session_dates_note_gets_409_and_other_fields_merge(
    client: TestClient, ben: TestClient, session: Session, day: SessionDay, first_is_ben: bool,
) -> None:
    first, second = (ben, client) if first_is_ben else (client, ben)
    path = f"/studies/{day.study_id}/attendance/days/{day.id}"
    first_form, second_form = (edit_form(h, f"{path}/edit") for h in (first, second))

    assert first.post(path, data={**first_form, "note": "Node 1 only"},
                      headers=HX).status_code == 200
    clash = second.post(path, data={**second_form, "note": "Nodes 1 to 3"}, headers=HX)
    moved = second.post(path, data={**second_form, "day": "2026-03-03"}, headers=HX)

    assert clash.status_code == 409
    assert "Theirs: Node 1 only · yours: Nodes 1 to 3" in text_of(clash.text, "edit-day-conflict")
    assert moved.status_code == 200
    row = reloaded(session, SessionDay, day.id)
    assert (row.day, row.note) == (date(2026, 3, 3), "Node 1 only")


def test_a_post_without_a_version_saves_as_before(
    client: TestClient, session: Session, person: Participant,
) -> None:
    """Scripts that send no version save unguarded (as the worksheet's forms do)."""
    reply = save_person(client, person, {"name": "Dana Field (invented)", "role": "Engineer"})
    assert reply.startswith("200")
    assert reloaded(session, Participant, person.id).role == "Engineer"


def test_the_matrix_form_writes_only_the_boxes_changed_since_it_was_loaded(
    client: TestClient, ben: TestClient, session: Session, day: SessionDay,
) -> None:
    """Ada's page (loaded with no marks) ticks Dana; meanwhile Ben ticked Eli. Ada's
    no-JavaScript save must not untick Eli, and unticking a box she loaded ticked still works."""
    dana, eli = (Participant(study_id=day.study_id, name=name) for name in ("Dana", "Eli"))
    session.add_all([dana, eli])
    session.commit()
    page = client.get(f"/studies/{day.study_id}/attendance").text
    loaded = re.search(r'name="loaded_marks" value="([^"]*)"', page)
    assert loaded is not None and loaded[1] == ""
    marks = f"/studies/{day.study_id}/attendance/marks"
    assert ben.post(f"{marks}/{day.id}/{eli.id}",
                    data={"present": f"{day.id}:{eli.id}"}).status_code == 200

    saved = client.post(marks, data={"present": [f"{day.id}:{dana.id}"], "loaded_marks": ""})

    assert saved.status_code == 200
    session.expire_all()
    present = {m.participant_id for m in session.exec(select(Attendance)).all()}
    assert present == {dana.id, eli.id}
    client.post(marks, data={"present": [], "loaded_marks": f"{day.id}:{dana.id}"})
    session.expire_all()
    assert {m.participant_id for m in session.exec(select(Attendance)).all()} == {eli.id}


def test_saving_a_participant_someone_deleted_says_who_and_when(
    client: TestClient, ben: TestClient, person: Participant,
) -> None:
    form = person_form(client, person)
    assert ben.post(f"/studies/{person.study_id}/attendance/participants/{person.id}/delete",
                    headers=HX).status_code == 200

    reply = save_person(client, person, {**form, "role": "Shift lead"})

    assert reply.startswith("409")
    message = text_of(reply.split(" ", 1)[1], "error-message")
    assert f"This participant was deleted by {OTHER_AUTHOR} at " in message
    assert "It cannot be undone. Your changes were not saved." in message
