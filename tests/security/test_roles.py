"""Access and roles on the meeting-room network (LAN mode), and on loopback.

Participants and viewers join with the day's code; the facilitator and the scribe sign in
with the passphrase. Participants and viewers see the room view and nothing that edits.
"""

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.access.codes import normalise_code
from app.access.ratelimit import MAX_FAILURES
from app.access.state import todays_join_code
from app.db.models import ChangeLogEntry, Step, Study
from app.main import create_app
from tests.factories import make_scenario_tree, make_step
from tests.helpers import HX
from tests.security.conftest import LAN_DEVICE, NewDevice, join, sign_in
from tests.security.sessions import attach_token


@pytest.fixture
def layer(session: Session) -> Step:
    """An IPL at 1 in 10 in an invented one-scenario study."""
    return make_step(session, make_scenario_tree(session), value=0.1, value_text="1 in 10")


def value_post(device: TestClient, step: Step, text: str) -> int:
    url = f"/studies/{step.study_id}/steps/{step.id}/value"
    return device.post(url, data={"value_text": text}, headers=HX).status_code


def stored_text(session: Session, step: Step) -> str:
    session.expire_all()
    row = session.get(Step, step.id)
    assert row is not None
    return row.value_text


def test_without_a_session_a_page_sends_you_to_join_and_htmx_is_told_to(
    lan_device: NewDevice, layer: Step
) -> None:
    device = lan_device()
    study = layer.study_id
    page = device.get(f"/studies/{study}/worksheet?x=1")
    assert page.status_code == 303
    assert page.headers["location"] == f"/join?next=%2Fstudies%2F{study}%2Fworksheet%3Fx%3D1"
    poll = device.get(f"/studies/{study}/room/live", headers=HX)
    assert poll.status_code == 401
    assert poll.headers["HX-Redirect"] == f"/join?next=%2Fstudies%2F{study}%2Froom%2Flive"


def test_a_participant_reads_the_room_view_but_cannot_edit_or_open_study_pages(
    lan_device: NewDevice, session: Session, layer: Step
) -> None:
    device = lan_device()
    assert join(device, session) == 303
    study = layer.study_id
    assert device.get(f"/studies/{study}/room").status_code == 200
    assert device.get(f"/studies/{study}/room/live", headers=HX).status_code == 200
    assert device.get("/rooms").status_code == 200
    for path in ["/", f"/studies/{study}", f"/studies/{study}/worksheet",
                 f"/studies/{study}/export.json", "/access"]:
        assert device.get(path).status_code == 403, path
    assert value_post(device, layer, "1 in 1000") == 403
    assert device.post(f"/studies/{study}/focus", data={"scenario_id": "1"}).status_code == 403
    assert stored_text(session, layer) == "1 in 10"


def test_a_viewer_sees_the_room_view_only(
    lan_device: NewDevice, session: Session, layer: Step
) -> None:
    device = lan_device()
    assert join(device, session, role="viewer", name="") == 303
    assert device.get(f"/studies/{layer.study_id}/room").status_code == 200
    assert device.get(f"/studies/{layer.study_id}").status_code == 403
    assert value_post(device, layer, "1 in 1000") == 403


def test_the_room_view_offers_joined_people_no_link_into_the_study(
    lan_device: NewDevice, session: Session, layer: Step
) -> None:
    device = lan_device()
    join(device, session)
    page = device.get(f"/studies/{layer.study_id}/room").text
    assert f'href="http://testserver/studies/{layer.study_id}"' not in page
    assert 'href="http://testserver/rooms"' in page


def test_joining_needs_today_code_and_a_participant_name(
    lan_device: NewDevice, session: Session
) -> None:
    device = lan_device()
    assert join(device, session, code="AAAAAA") == 422
    assert join(device, session, name=" ") == 422
    spoken = todays_join_code(session).lower()
    assert join(device, session, code=f" {spoken[:3]}-{spoken[3:]} ") == 303
    assert normalise_code(f"{spoken[:3]} - {spoken[3:]}") == spoken.upper()


def test_a_scribe_signs_in_with_the_passphrase_edits_and_signs_the_change_log(
    lan_device: NewDevice, session: Session, layer: Step
) -> None:
    device = lan_device()
    assert sign_in(device, passphrase="not the passphrase") == 422
    assert value_post(device, layer, "1 in 1000") == 401  # has a token, has no role
    assert sign_in(device, name="S. Mbeki") == 303
    assert value_post(device, layer, "1 in 1000") == 200
    assert stored_text(session, layer) == "1 in 1000"
    authors = session.exec(select(ChangeLogEntry.author).where(
        ChangeLogEntry.entity == "step", ChangeLogEntry.field == "value_text")).all()
    assert authors == ["S. Mbeki"]
    assert device.get("/access").status_code == 403  # the settings page is the facilitator's


def test_join_attempts_are_rate_limited_per_device(
    lan_device: NewDevice, session: Session
) -> None:
    device = lan_device()
    for _ in range(MAX_FAILURES):
        assert join(device, session, code="WRONG1") == 422
    refused = device.post("/join", data={"code": todays_join_code(session), "name": "P",
                                         "role": "participant"})
    assert refused.status_code == 429
    assert 1 <= int(refused.headers["Retry-After"]) <= 60
    assert "Too many wrong attempts" in refused.text
    assert sign_in(device) == 429  # the passphrase shares the limit


def test_a_new_join_code_stops_the_old_one(
    lan_device: NewDevice, session: Session
) -> None:
    facilitator = lan_device()
    assert sign_in(facilitator, role="facilitator") == 303
    old = todays_join_code(session)
    assert facilitator.get("/access").status_code == 200
    assert facilitator.post("/access/join-code").status_code == 303
    session.expire_all()
    new = todays_join_code(session)
    assert new != old
    assert join(lan_device(), session, code=old) == 422
    assert join(lan_device(), session, code=new) == 303


def test_ending_sessions_sends_everyone_else_back_to_join(
    lan_device: NewDevice, session: Session, layer: Step
) -> None:
    facilitator, participant, scribe = lan_device(), lan_device(), lan_device()
    assert sign_in(facilitator, role="facilitator") == 303
    assert join(participant, session) == 303
    assert sign_in(scribe) == 303
    assert facilitator.post("/access/sessions").status_code == 303
    room = f"/studies/{layer.study_id}/room"
    assert participant.get(room).status_code == 303
    assert value_post(scribe, layer, "1 in 1000") == 401
    assert stored_text(session, layer) == "1 in 10"
    attach_token(facilitator, "/access")
    assert value_post(facilitator, layer, "1 in 1000") == 200


def test_signing_out_ends_the_session(lan_device: NewDevice, session: Session,
                                      layer: Step) -> None:
    device = lan_device()
    join(device, session)
    assert device.post("/sign-out").status_code == 303
    assert device.get(f"/studies/{layer.study_id}/room").status_code == 303


def test_a_loopback_session_is_not_a_facilitator_on_the_network(
    client: TestClient, lan_device: NewDevice, demo_study: Study
) -> None:
    device = lan_device()
    device.cookies.update(client.cookies)  # the loopback user's cookie, replayed
    assert device.get(f"/studies/{demo_study.id}").status_code == 303


def test_on_loopback_the_person_at_this_computer_edits_without_signing_in(
    client: TestClient, session: Session, layer: Step
) -> None:
    assert value_post(client, layer, "1 in 1000") == 200
    assert client.get("/access").status_code == 200


def test_a_loopback_server_refuses_other_machines(session: Session, demo_study: Study) -> None:
    with TestClient(create_app(), client=LAN_DEVICE) as other:
        response = other.get(f"/studies/{demo_study.id}")
    assert response.status_code == 403
    assert "serves only the computer it runs on" in response.text


@pytest.mark.parametrize("role", ["facilitator", "scribe", "FACILITATOR", "4"])
def test_the_join_code_never_grants_an_editing_role(
    lan_device: NewDevice, session: Session, layer: Step, role: str
) -> None:
    device = lan_device()
    assert join(device, session, role=role) == 422
    assert device.get(f"/studies/{layer.study_id}/room").status_code == 303


def test_a_participant_session_lasts_the_day_it_joined_and_an_editor_session_longer() -> None:
    from datetime import date

    from app.access.roles import Role
    from app.access.sessions import _network_role  # the rule itself, dates chosen

    joined = {"role": "participant", "net": True, "day": "2026-12-02"}
    assert _network_role(joined, date(2026, 12, 2)) is Role.PARTICIPANT
    assert _network_role(joined, date(2026, 12, 3)) is None
    signed_in = {**joined, "role": "scribe"}
    assert _network_role(signed_in, date(2026, 12, 3)) is Role.SCRIBE
    assert _network_role({**signed_in, "net": False}, date(2026, 12, 2)) is None


@pytest.mark.parametrize(("typed", "logged"), [
    ("Łukasz Wróbel-Nakamura", "Łukasz Wróbel-Nakamura"),
    ("王芳", "王芳"),
    ("محمد الأحمد", "محمد الأحمد"),
    ("  R.\x00 Okoye\t\n ", "R. Okoye"),
])
def test_any_script_is_a_name_and_control_characters_are_dropped(
    client: TestClient, session: Session, layer: Step, typed: str, logged: str
) -> None:
    assert client.post("/author", data={"name": typed}, follow_redirects=False).status_code == 303
    assert value_post(client, layer, "1 in 1000") == 200
    authors = session.exec(select(ChangeLogEntry.author).where(
        ChangeLogEntry.entity == "step", ChangeLogEntry.field == "value_text")).all()
    assert authors == [logged]
