"""The facilitator's round pages over HTTP: open a round from a step, type estimates for people
without devices, reveal, agree; every refusal is a 422 naming the rule, never a 500.

External checks: geometric mean against scipy.stats.gmean, median against numpy.median.
"""

import re

import numpy
import pytest
from fastapi.testclient import TestClient
from scipy.stats import gmean
from sqlmodel import Session

from app.db.models import Step
from app.likelihood.types import StepKind
from tests.factories import make_scenario_tree, make_step
from tests.helpers import attrs_of

TYPED = {"D. Mwangi": "1 in 100", "E. Sato": "1 in 1000", "F. Berg": "1e-4", "G. Haas": "2e-3"}
VALUES = [1e-2, 1e-3, 1e-4, 2e-3]


def _step(session: Session) -> Step:
    scenario = make_scenario_tree(session)
    return make_step(session, scenario, kind=StepKind.IPL, value=0.1, description="Trip valve")


def _open(client: TestClient, step: Step) -> str:
    form = client.get(f"/studies/{step.study_id}/steps/{step.id}/rounds/new")
    assert form.status_code == 200 and "Trip valve" in form.text
    assert attrs_of(form.text, "question")["value"] == (
        "What is the probability that “Trip valve” fails when it is needed?")
    response = client.post(f"/studies/{step.study_id}/steps/{step.id}/rounds",
                           data={"question": "How often does the trip valve fail to close?"},
                           follow_redirects=False)
    assert response.status_code == 303
    return str(response.headers["location"])


def test_the_worksheet_offers_a_round_on_every_value_field(client: TestClient,
                                                           session: Session) -> None:
    step = _step(session)
    page = client.get(f"/studies/{step.study_id}/worksheet", follow_redirects=True)
    assert f"/studies/{step.study_id}/steps/{step.id}/rounds/new" in page.text
    assert "Alt</kbd>+<kbd>R" in client.get("/help/keys").text


def test_the_scribe_types_for_people_without_devices_then_reveals_and_agrees(
        client: TestClient, session: Session) -> None:
    step = _step(session)
    round_path = _open(client, step)
    for person, text in TYPED.items():
        posted = client.post(f"{round_path}/estimates", data={"person": person, "value_text": text},
                             follow_redirects=False)
        assert posted.status_code == 303
    hidden = client.get(round_path).text
    assert all(name in hidden for name in TYPED) and "1e-4" not in hidden and "1.0e-4" not in hidden
    assert client.post(f"{round_path}/reveal", follow_redirects=False).status_code == 303
    shown = client.get(round_path).text
    assert attrs_of(shown, "round")["data-state"] == "revealed"
    exact = re.search(r'data-figure="geometric-mean" data-exact="([^"]+)"', shown)
    assert exact and float(exact.group(1)) == pytest.approx(gmean(VALUES))  # scipy
    median = re.search(r'data-figure="median" data-exact="([^"]+)"', shown)
    assert median and float(median.group(1)) == numpy.median(VALUES)  # numpy: 1.5e-3
    assert "Discuss:" in shown  # by hand: log10(1e-2 / 1e-4) = 2 orders > 1
    room = client.get(f"/studies/{step.study_id}/room").text
    assert room.count('data-mark="estimate"') == 4 and "F. Berg" in room
    agreed = client.post(f"{round_path}/agreement",
                         data={"method": "median", "dissents": "F. Berg: the valve is new"},
                         follow_redirects=False)
    assert agreed.status_code == 303
    session.refresh(step)
    assert step.value == numpy.median(VALUES)
    assert step.basis == ("agreed in round 1 from 4 estimates, 1.0e-4 to 1.0e-2, median 1.5e-3; "
                          "F. Berg dissents: the valve is new")


def test_refusals_are_422_with_the_rule(client: TestClient, session: Session) -> None:
    step = _step(session)
    empty = client.post(f"/studies/{step.study_id}/steps/{step.id}/rounds",
                        data={"question": " "})
    assert empty.status_code == 422 and "question in words" in empty.text
    round_path = _open(client, step)
    early = client.post(f"{round_path}/reveal")
    assert early.status_code == 422 and "nobody has answered" in early.text
    nameless = client.post(f"{round_path}/estimates", data={"person": "", "value_text": "1e-3"})
    assert nameless.status_code == 422 and "needs the name" in nameless.text
    above_one = client.post(f"{round_path}/estimates", data={"person": "D. Mwangi",
                                                            "value_text": "1.5"})
    assert above_one.status_code == 422 and 'value="1.5"' in above_one.text
    unrevealed = client.post(f"{round_path}/agreement", data={"method": "median"})
    assert unrevealed.status_code == 422 and "reveal the round first" in unrevealed.text
    assert client.get(f"/studies/{step.study_id}/rounds/999999").status_code == 404


def test_a_second_round_keeps_the_first_visible(client: TestClient, session: Session) -> None:
    step = _step(session)
    first = _open(client, step)
    client.post(f"{first}/estimates", data={"person": "D. Mwangi", "value_text": "1e-2"})
    client.post(f"{first}/reveal")
    second = client.post(f"{first}/next", follow_redirects=False).headers["location"]
    assert second != first
    page = client.get(second).text
    assert "Round 2" in page and "Other rounds on this step" in page and "1.0e-2" in page
    listing = client.get(f"/studies/{step.study_id}/rounds").text
    assert listing.count("data-round=") == 2
