"""The attendance page: session dates, participants and who attended which date."""

from datetime import date

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import Attendance, Participant, SessionDay, Study
from app.services.record.attendance import add_day, add_participant, set_attendance
from tests.factories import make_study
from tests.helpers import HX, table_rows


def _study_with_two_days_and_two_people(session: Session) -> tuple[Study, list[int], list[int]]:
    study = make_study(session)
    days = [add_day(session=session, study_id=study.id, day=d, note=n).id
            for d, n in (("2026-11-11", "Node 3"), ("2026-11-10", "Nodes 1 and 2"))]
    people = [add_participant(session=session, study_id=study.id, values=v).id for v in (
        {"name": "Ilse Marrow-Quaye", "role": "Facilitator", "company": "Invented Ltd"},
        {"name": "A. Okafor", "role": "Process engineer", "discipline": "Process"},
    )]
    set_attendance(session=session, study_id=study.id, day_id=days[1], participant_id=people[0],
                   present=True)
    return study, days, people


def test_the_page_lists_dates_in_order_people_and_the_attendance_matrix(
    client: TestClient, session: Session
) -> None:
    study, _days, _people = _study_with_two_days_and_two_people(session)
    page = client.get(f"/studies/{study.id}/attendance").text
    assert [row[:3] for row in table_rows(page, "days-table")[1:]] == [
        ["2026-11-10", "Nodes 1 and 2", "1"], ["2026-11-11", "Node 3", "0"]]
    assert [row[:4] for row in table_rows(page, "participants-table")[1:]] == [
        ["Ilse Marrow-Quaye", "Facilitator", "—", "Invented Ltd"],
        ["A. Okafor", "Process engineer", "Process", "—"]]
    assert table_rows(page, "attendance-table")[0] == ["Participant", "2026-11-10", "2026-11-11"]
    assert table_rows(page, "attendance-table")[-1] == ["Present", "1", "0"]


def test_the_demo_study_has_its_invented_days_and_people(
    client: TestClient, demo_study: Study
) -> None:
    page = client.get(f"/studies/{demo_study.id}/attendance").text
    assert len(table_rows(page, "days-table")) == 4
    assert len(table_rows(page, "participants-table")) == 8
    assert table_rows(page, "attendance-table")[-1] == ["Present", "6", "6", "6"]


def test_ticking_a_box_saves_one_mark_and_answers_the_new_count(
    client: TestClient, session: Session
) -> None:
    study, days, people = _study_with_two_days_and_two_people(session)
    mark = f"{days[0]}:{people[1]}"
    # htmx sends the whole matrix form: the ticked box's own value and the other ticked boxes.
    response = client.post(f"/studies/{study.id}/attendance/marks/{days[0]}/{people[1]}",
                           data={"present": [mark, f"{days[1]}:{people[0]}"]}, headers=HX)
    assert response.status_code == 200
    assert f'<span id="day-count-{days[0]}" hx-swap-oob="true">1</span>' in response.text
    assert session.get(Attendance, (days[0], people[1])) is not None
    client.post(f"/studies/{study.id}/attendance/marks/{days[0]}/{people[1]}",
                data={"present": [f"{days[1]}:{people[0]}"]}, headers=HX)
    session.expire_all()
    assert session.get(Attendance, (days[0], people[1])) is None


def test_the_matrix_form_without_javascript_saves_exactly_the_ticked_boxes(
    client: TestClient, session: Session
) -> None:
    study, days, people = _study_with_two_days_and_two_people(session)
    ticked = [f"{days[0]}:{people[0]}", f"{days[0]}:{people[1]}"]
    response = client.post(f"/studies/{study.id}/attendance/marks", data={"present": ticked},
                           follow_redirects=False)
    assert response.status_code == 303
    saved = {(a.session_day_id, a.participant_id) for a in session.exec(select(Attendance))}
    assert saved == {(days[0], people[0]), (days[0], people[1])}


@pytest.mark.parametrize("mark", ["nonsense", "999:999"])
def test_a_forged_matrix_mark_is_refused(client: TestClient, session: Session, mark: str) -> None:
    study, _days, _people = _study_with_two_days_and_two_people(session)
    response = client.post(f"/studies/{study.id}/attendance/marks", data={"present": [mark]},
                           headers=HX)
    assert response.status_code == 422
    assert 'id="attendance-form-error"' in response.text
    assert len(session.exec(select(Attendance)).all()) == 1


def test_dates_and_people_are_added_edited_and_deleted(
    client: TestClient, session: Session
) -> None:
    study = make_study(session)
    base = f"/studies/{study.id}/attendance"
    client.post(f"{base}/days", data={"day": "2026-11-10", "note": "Node 1"})
    client.post(f"{base}/participants", data={"name": "Kofi Leventhorpe", "role": "HSE"})
    day = session.exec(select(SessionDay)).one()
    person = session.exec(select(Participant)).one()
    client.post(f"{base}/days/{day.id}", data={"day": "2026-11-12", "note": "Node 2"})
    client.post(f"{base}/participants/{person.id}", data={"name": "K. Leventhorpe", "role": "HSE"})
    session.expire_all()
    assert (day.day, day.note, person.name) == (date(2026, 11, 12), "Node 2", "K. Leventhorpe")
    set_attendance(session=session, study_id=study.id, day_id=day.id, participant_id=person.id,
                   present=True)
    client.post(f"{base}/participants/{person.id}/delete")
    client.post(f"{base}/days/{day.id}/delete")
    assert session.exec(select(SessionDay)).all() == []
    assert session.exec(select(Participant)).all() == []


def test_edit_opens_the_row_as_a_form_with_escape_to_cancel(
    client: TestClient, session: Session
) -> None:
    study, days, people = _study_with_two_days_and_two_people(session)
    fragment = client.get(f"/studies/{study.id}/attendance/days/{days[0]}/edit",
                          headers=HX).text
    assert fragment.lstrip().startswith('<div id="attendance-section"')
    assert 'id="edit-day-date"' in fragment and 'value="2026-11-11"' in fragment
    assert 'hx-trigger="tallyroom-escape"' in fragment  # static/app.js fires it on Escape
    person_page = client.get(f"/studies/{study.id}/attendance/participants/{people[1]}/edit")
    assert 'id="edit-person-name"' in person_page.text and 'value="A. Okafor"' in person_page.text


@pytest.mark.parametrize(
    ("path", "data", "field_id", "message", "kept"),
    [
        ("days", {"day": "10 Nov", "note": "kept note"}, "new-day-date",
         "the session date must be written YYYY-MM-DD (got &#39;10 Nov&#39;).",
         'value="kept note"'),
        ("days", {"day": "", "note": "kept note"}, "new-day-date",
         "the session date is required", 'value="kept note"'),
        ("days", {"day": "2026-11-10", "note": "again"}, "new-day-date",
         "2026-11-10 is already a session date.", 'value="again"'),
        ("days", {"day": "2026-11-20", "note": "x" * 501}, "new-day-note",
         "at most 500 characters", 'value="2026-11-20"'),
        ("participants", {"name": " ", "role": "Kept role"}, "new-person-name",
         "the participant&#39;s name is required.", 'value="Kept role"'),
        ("participants", {"name": "N", "company": "c" * 121}, "new-person-company",
         "at most 120 characters", 'value="N"'),
    ],
)
def test_bad_new_rows_are_refused_at_the_field_with_the_typed_text_kept(
    client: TestClient, session: Session, path: str, data: dict[str, str], field_id: str,
    message: str, kept: str,
) -> None:
    study, _days, _people = _study_with_two_days_and_two_people(session)
    response = client.post(f"/studies/{study.id}/attendance/{path}", data=data, headers=HX)
    assert response.status_code == 422
    assert f'id="{field_id}-error"' in response.text
    assert message in response.text
    assert kept in response.text
    assert len(session.exec(select(SessionDay)).all()) == 2
    assert len(session.exec(select(Participant)).all()) == 2


@pytest.mark.parametrize(
    ("what", "data", "field_id", "message"),
    [
        ("days", {"day": "2026-11-10", "note": ""}, "edit-day-date",
         "2026-11-10 is already a session date."),
        ("days", {"day": "tomorrow", "note": ""}, "edit-day-date", "YYYY-MM-DD"),
        ("participants", {"name": ""}, "edit-person-name", "name is required"),
    ],
)
def test_bad_edits_are_refused_in_the_edit_row(
    client: TestClient, session: Session, what: str, data: dict[str, str], field_id: str,
    message: str,
) -> None:
    study, days, people = _study_with_two_days_and_two_people(session)
    row_id = days[0] if what == "days" else people[0]
    response = client.post(f"/studies/{study.id}/attendance/{what}/{row_id}", data=data,
                           headers=HX)
    assert response.status_code == 422
    assert f'id="{field_id}-error"' in response.text and message in response.text
    session.expire_all()
    assert session.get(SessionDay, days[0]).day == date(2026, 11, 11)
    assert session.get(Participant, people[0]).name == "Ilse Marrow-Quaye"


def test_a_date_of_another_study_is_a_404(client: TestClient, session: Session) -> None:
    _study, days, people = _study_with_two_days_and_two_people(session)
    other = make_study(session)
    response = client.post(f"/studies/{other.id}/attendance/days/{days[0]}/delete")
    assert response.status_code == 404
    assert client.get(f"/studies/{other.id}/attendance/days/{days[0]}/edit").status_code == 404
    edit_person = f"/studies/{other.id}/attendance/participants/{people[0]}/edit"
    assert client.get(edit_person).status_code == 404
