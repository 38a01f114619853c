"""Two people with the proof-test calculator open on one IPL: "Use this PFD for the step"
sends the step's version and PFD as the calculator opened them, so the later of two applies
gets 409 with both PFDs and "keep mine" / "take theirs" (logged), never a silent replace.

PFDs by hand, IEC 61508-6 Annex B simplified 1oo1: PFDavg = λDU (T1/2 + MRT) with
λDU = 5e-7 /h and MRT 8 h: T1 = 8760 h -> 5e-7 x 4388 = 2.194e-3 ("2.19e-3");
T1 = 17520 h -> 5e-7 x 8768 = 4.384e-3 ("4.38e-3")."""

import html
import re

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, col, select

from app.db.models import ChangeLogEntry, Step
from tests.factories import make_scenario_tree, make_step
from tests.helpers import OTHER_AUTHOR, TEST_AUTHOR, reloaded, text_of

ONE_YEAR = {"architecture": "1oo1", "lambda_du": "5e-7", "lambda_dd": "0", "beta": "",
            "beta_d": "", "interval_value": "8760", "interval_unit": "hours",
            "mttr_hours": "8", "mrt_hours": "8", "target_pfd": ""}
TWO_YEARS = {**ONE_YEAR, "interval_value": "17520"}
_HIDDEN = re.compile(r'<input type="hidden" name="([^"]+)" value="([^"]*)"')


@pytest.fixture
def step(session: Session) -> Step:
    return make_step(session, make_scenario_tree(session), value=0.1, value_text="0.1",
                     description="Overfill trip", basis="Loop drawing 40-LSHH-1.")


def opened(http: TestClient, step: Step) -> dict[str, str]:
    """What the calculator page sends besides the typed inputs: step, version, loaded PFD."""
    page = http.get(f"/studies/{step.study_id}/proof-test", params={"step_id": step.id}).text
    return {name: html.unescape(value) for name, value in _HIDDEN.findall(page)
            if name != "csrf_token"}


def apply(http: TestClient, step: Step, data: dict[str, str]) -> tuple[int, str]:
    reply = http.post(f"/studies/{step.study_id}/proof-test/apply", data=data,
                      follow_redirects=False)
    return reply.status_code, reply.text


@pytest.mark.parametrize("first_is_ben", [False, True])
def test_the_second_apply_gets_409_with_both_pfds(
    client: TestClient, ben: TestClient, session: Session, step: Step, first_is_ben: bool,
) -> None:
    first, second = (ben, client) if first_is_ben else (client, ben)
    first_name = OTHER_AUTHOR if first_is_ben else TEST_AUTHOR
    first_page, second_page = opened(first, step), opened(second, step)
    assert (first_page["orig_value_text"], first_page["version"]) == ("0.1", str(step.version))

    assert apply(first, step, {**ONE_YEAR, **first_page})[0] == 303
    status, reply = apply(second, step, {**TWO_YEARS, **second_page})

    assert status == 409
    box = text_of(reply, "apply-conflict")
    assert f"The step's PFD was changed by {first_name}" in box
    assert "Theirs: 2.19e-3 · yours: 4.38e-3" in box
    assert reloaded(session, Step, step.id).value_text == "2.19e-3"
    assert re.findall(r'data-resolve="(\w+)" formaction="[^"]+/proof-test/apply">', reply) == [
        "keep", "take"]


def test_keep_mine_applies_over_theirs_and_take_theirs_saves_nothing(
    client: TestClient, ben: TestClient, session: Session, step: Step,
) -> None:
    ada_page, ben_page = opened(client, step), opened(ben, step)
    apply(client, step, {**ONE_YEAR, **ada_page})
    again = {**TWO_YEARS, **ben_page, "seen_value_text": "2.19e-3"}

    assert apply(ben, step, {**again, "resolution": "take"})[0] == 303
    assert reloaded(session, Step, step.id).value_text == "2.19e-3"
    assert apply(ben, step, {**again, "resolution": "keep"})[0] == 303
    row = reloaded(session, Step, step.id)
    assert (row.value_text, row.value) == ("4.38e-3", pytest.approx(5e-7 * (17520 / 2 + 8)))
    choices = session.exec(select(ChangeLogEntry).where(ChangeLogEntry.action == "conflict")
                           .order_by(col(ChangeLogEntry.id))).all()
    assert [(c.author, c.old_value, c.new_value) for c in choices] == [
        (OTHER_AUTHOR, "2.19e-3", "2.19e-3"), (OTHER_AUTHOR, "2.19e-3", "4.38e-3")]


def test_an_edit_of_another_field_of_the_step_does_not_stop_the_apply(
    client: TestClient, session: Session, step: Step,
) -> None:
    """Only the PFD is guarded: a new description since the calculator opened is kept."""
    page = opened(client, step)
    row = reloaded(session, Step, step.id)
    row.description = "Overfill trip LSHH-1 (invented)"
    session.add(row)
    session.commit()

    assert apply(client, step, {**ONE_YEAR, **page})[0] == 303
    row = reloaded(session, Step, step.id)
    assert (row.value_text, row.description) == ("2.19e-3", "Overfill trip LSHH-1 (invented)")
