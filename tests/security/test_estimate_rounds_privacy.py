"""On the meeting-room network a participant sees and changes only their own estimate, and
nothing of anyone's estimate reaches any page or fragment before the facilitator reveals."""

import threading
from typing import Any

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import RoundEstimate, Step
from app.likelihood.types import StepKind
from app.services.estimates import answers, rounds
from tests.factories import make_scenario_tree, make_step
from tests.security.conftest import NewDevice, join, sign_in

# Distinctive typed texts and their values as the pages would print them (format_number).
SECRETS = {"A. Lind": ("1 in 731", "1.4e-3"), "B. Osei": ("0.0417", "4.2e-2")}


def _round(session: Session) -> tuple[Step, int]:
    scenario = make_scenario_tree(session)
    step = make_step(session, scenario, kind=StepKind.IPL, value=0.1,
                     description="Operator response to alarm")
    found = rounds.open_round(session=session, study_id=step.study_id, step_id=step.id or 0,
                              question="What is the probability the operator misses it?")
    return step, found.id or 0


def _answer(device: TestClient, step: Step, round_id: int, text: str) -> int:
    response = device.post(f"/studies/{step.study_id}/estimate",
                           data={"round_id": str(round_id), "value_text": text})
    return response.status_code


def _participants(lan_device: NewDevice, session: Session) -> dict[str, TestClient]:
    devices = {}
    for person in SECRETS:
        devices[person] = lan_device()
        assert join(devices[person], session, name=person) == 303
    return devices


def _everything_a_participant_can_fetch(device: TestClient, step: Step, round_id: int) -> str:
    study = step.study_id
    paths = [f"/studies/{study}/estimate", f"/studies/{study}/estimate/live?round_id=0",
             f"/studies/{study}/room", f"/studies/{study}/room/live",
             f"/studies/{study}/rounds/{round_id}", f"/studies/{study}/rounds/{round_id}/answers",
             f"/studies/{study}/rounds", f"/studies/{study}/change-log"]
    return "\n".join(device.get(path, headers={"HX-Request": "true"}).text for path in paths)


def test_nothing_of_anyone_s_estimate_is_sent_before_the_reveal(
        lan_device: NewDevice, session: Session) -> None:
    step, round_id = _round(session)
    devices = _participants(lan_device, session)
    for person, (typed, _shown) in SECRETS.items():
        assert _answer(devices[person], step, round_id, typed) == 303
    lind_sees = _everything_a_participant_can_fetch(devices["A. Lind"], step, round_id)
    assert "1 in 731" in lind_sees  # their own, echoed on their page
    assert "0.0417" not in lind_sees and "4.2e-2" not in lind_sees
    scribe = lan_device()
    assert sign_in(scribe) == 303
    facilitator_sees = _everything_a_participant_can_fetch(scribe, step, round_id)
    for typed, shown in SECRETS.values():
        assert typed not in facilitator_sees and shown not in facilitator_sees
    assert "A. Lind" in facilitator_sees and "B. Osei" in facilitator_sees  # who, not what


def test_a_participant_reaches_no_round_page_and_cannot_reveal_agree_or_type_for_others(
        lan_device: NewDevice, session: Session) -> None:
    step, round_id = _round(session)
    device = _participants(lan_device, session)["A. Lind"]
    base = f"/studies/{step.study_id}/rounds/{round_id}"
    assert device.get(base).status_code == 403
    assert device.get(f"{base}/answers").status_code == 403
    for path, data in [(f"{base}/reveal", {}), (f"{base}/agreement", {"method": "median"}),
                       (f"{base}/estimates", {"person": "B. Osei", "value_text": "1e-2"}),
                       (f"{base}/next", {}), (f"{base}/names", {"shown": "false"})]:
        assert device.post(path, data=data).status_code == 403
    assert session.exec(select(RoundEstimate)).all() == []


def test_a_participant_cannot_overwrite_another_person_s_estimate(
        lan_device: NewDevice, session: Session) -> None:
    step, round_id = _round(session)
    devices = _participants(lan_device, session)
    assert _answer(devices["A. Lind"], step, round_id, "1 in 731") == 303
    impostor = lan_device()
    assert join(impostor, session, name="A. Lind") == 303  # same name, another device
    assert _answer(impostor, step, round_id, "0.9") == 422
    assert _answer(devices["A. Lind"], step, round_id, "1 in 800") == 303  # own: may change
    saved = session.exec(select(RoundEstimate)).one()
    session.refresh(saved)
    assert (saved.person, saved.value_text) == ("A. Lind", "1 in 800")


def test_an_estimate_for_a_round_of_another_study_is_not_found(
        lan_device: NewDevice, session: Session) -> None:
    _step, round_id = _round(session)
    other = make_scenario_tree(session, title="Other study")
    device = _participants(lan_device, session)["A. Lind"]
    response = device.post(f"/studies/{other.study_id}/estimate",
                           data={"round_id": str(round_id), "value_text": "1e-3"})
    assert response.status_code == 404
    assert session.exec(select(RoundEstimate)).all() == []


def test_two_devices_joined_under_one_name_answering_at_once_get_303_and_422_never_500(
        lan_device: NewDevice, session: Session, monkeypatch: pytest.MonkeyPatch) -> None:
    """The unique-index race through the routes: both requests find no estimate for the name,
    then both insert (a barrier holds each after its look until both have looked)."""
    step, round_id = _round(session)
    phones = [lan_device(), lan_device()]
    for phone in phones:
        assert join(phone, session, name="A. Lind") == 303
    both_looked = threading.Barrier(2, timeout=10)
    first_look = threading.local()
    original = answers._existing

    def looked_then_wait(*args: Any) -> Any:
        found = original(*args)
        if not getattr(first_look, "done", False):
            first_look.done = True
            both_looked.wait()
        return found

    monkeypatch.setattr(answers, "_existing", looked_then_wait)
    replies: list[Any] = [None, None]

    def send(index: int, text: str) -> None:
        replies[index] = phones[index].post(f"/studies/{step.study_id}/estimate",
                                            data={"round_id": str(round_id), "value_text": text})

    threads = [threading.Thread(target=send, args=(i, t)) for i, t in enumerate(("1e-2", "0.3"))]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert sorted(r.status_code for r in replies) == [303, 422]
    refused = next(r for r in replies if r.status_code == 422)
    assert "A. Lind has already answered this round from another device" in refused.text
    assert len(session.exec(select(RoundEstimate)).all()) == 1
