"""The team word scale: the list is edited as "word = number" lines; typing an adopted word in
a value field uses its number, echoes word and number and records the word in the basis; a word
not on the scale is refused with the adopted list (422, nothing saved)."""

import html
import re

import pytest
from fastapi.testclient import TestClient
from scipy.stats import gmean
from sqlmodel import Session, select

from app.db.models import ChangeLogEntry, ScaleWord, Step
from app.likelihood.types import StepKind
from tests.factories import make_scenario_tree, make_step
from tests.helpers import HX

PROBABILITY_WORDS = "unlikely = 1 in 100\nRemote = 1e-3\ncredible"
FREQUENCY_WORDS = "frequent = once in 2 years"


def _save(client: TestClient, study_id: int, probability: str = PROBABILITY_WORDS,
          per_year: str = FREQUENCY_WORDS) -> int:
    response = client.post(f"/studies/{study_id}/word-scale",
                           data={"probability": probability, "per_year": per_year},
                           follow_redirects=False)
    return response.status_code


def _layer(session: Session) -> Step:
    scenario = make_scenario_tree(session)
    return make_step(session, scenario, kind=StepKind.IPL, value=0.1, value_text="1 in 10",
                     description="Operator response", basis="procedure OP-12")


def _type(client: TestClient, step: Step, text: str) -> tuple[int, str]:
    response = client.post(f"/studies/{step.study_id}/steps/{step.id}/value",
                           data={"value_text": text}, headers=HX)
    return response.status_code, html.unescape(response.text)


def test_the_list_is_saved_in_order_with_and_without_numbers(client: TestClient,
                                                             session: Session) -> None:
    step = _layer(session)
    assert _save(client, step.study_id) == 303
    rows = session.exec(select(ScaleWord).order_by(ScaleWord.unit, ScaleWord.position)).all()
    assert [(r.unit, r.word, r.value) for r in rows] == [
        ("per_year", "frequent", 0.5),  # by hand: once in 2 years = 0.5 per year
        ("probability", "unlikely", 0.01), ("probability", "Remote", 0.001),
        ("probability", "credible", None)]
    page = client.get(f"/studies/{step.study_id}/word-scale").text
    assert "unlikely = 1.0e-2\nRemote = 1.0e-3\ncredible</textarea>" in page


def test_a_wrong_line_saves_nothing_and_names_the_rule(client: TestClient,
                                                       session: Session) -> None:
    step = _layer(session)
    assert _save(client, step.study_id) == 303
    for lines, rule in [("rare = 1e-4\nRARE = 1e-3", "adopted twice"),
                        ("one = 1e-2", "reads as a number"),
                        ("rare = 3", "Word 'rare'"),
                        # Found by the OpenAPI fuzz on PostgreSQL (a 500: text cannot hold NUL).
                        ("\x00", "NUL control character")]:
        response = client.post(f"/studies/{step.study_id}/word-scale",
                               data={"probability": lines, "per_year": ""})
        assert response.status_code == 422 and rule in html.unescape(response.text), lines
    assert len(session.exec(select(ScaleWord)).all()) == 4


def test_an_adopted_word_gives_its_number_and_goes_into_the_basis(client: TestClient,
                                                                  session: Session) -> None:
    step = _layer(session)
    _save(client, step.study_id)
    status, reply = _type(client, step, "  UNLIKELY ")
    assert status == 200
    assert "'unlikely' on the team's word scale = 1 in 100 · 1.0e-2" in reply
    session.refresh(step)
    assert (step.value, step.value_text) == (0.01, "UNLIKELY")
    assert step.basis == "procedure OP-12; team word scale: 'unlikely' = 1.0e-2"
    _type(client, step, "unlikely")  # typed again: the note is not repeated
    session.refresh(step)
    assert step.basis.count("team word scale") == 1


def test_an_unknown_or_unadopted_word_is_refused_with_the_adopted_list(
        client: TestClient, session: Session) -> None:
    step = _layer(session)
    _save(client, step.study_id)
    for word in ("rare", "credible"):
        status, reply = _type(client, step, word)
        assert status == 422
        assert "adopted words: unlikely (1.0e-2), Remote (1.0e-3)" in reply
    session.refresh(step)
    assert (step.value, step.value_text) == (0.1, "1 in 10")


def test_an_initiating_event_uses_the_per_year_words_only(client: TestClient,
                                                          session: Session) -> None:
    step = _layer(session)
    _save(client, step.study_id)
    event = session.exec(select(Step).where(Step.scenario_id == step.scenario_id,
                                            Step.kind == StepKind.INITIATING_EVENT)).one()
    assert _type(client, event, "frequent")[0] == 200
    session.refresh(event)
    assert event.value == 0.5
    status, reply = _type(client, event, "unlikely")
    assert status == 422 and "frequent (5.0e-1)" in reply


WORD_ESTIMATES = {"unlikely": {"A. Lind": "1e-2", "B. Osei": "1e-3", "C. Ruiz": "4e-3"},
                  "remote": {"A. Lind": "1e-4", "B. Osei": "1e-3", "C. Ruiz": "2e-5"}}


def test_a_private_word_round_shows_each_word_s_spread_then_adopts_the_geometric_means(
        client: TestClient, session: Session) -> None:
    step = _layer(session)
    study = step.study_id
    assert _save(client, study, probability="unlikely\nremote", per_year="") == 303
    assert client.post(f"/studies/{study}/word-scale/round",
                       follow_redirects=False).status_code == 303
    answer_page = client.get(f"/studies/{study}/estimate").text
    assert answer_page.count('class="answer-round"') == 2  # one input per word
    assert "What probability do you mean by “remote”?" in answer_page
    rounds = {word: int(found) for word, found in re.findall(
        r'<tr data-word="(\w+)"><td><a href="/studies/\d+/rounds/(\d+)"',
        client.get(f"/studies/{study}/word-scale").text)}
    for word, said in WORD_ESTIMATES.items():
        for person, text in said.items():
            client.post(f"/studies/{study}/rounds/{rounds[word]}/estimates",
                        data={"person": person, "value_text": text})
    hidden = client.get(f"/studies/{study}/room").text
    assert "hidden until the reveal" in hidden
    assert "2.0e-5" not in hidden and "2e-5" not in hidden
    assert client.post(f"/studies/{study}/word-scale/reveal",
                       follow_redirects=False).status_code == 303
    room = html.unescape(client.get(f"/studies/{study}/room").text)
    remote_means = gmean([1e-4, 1e-3, 2e-5])  # scipy: 1.3e-4
    assert 'data-word="remote"' in room and "1.7 ▲ discuss" in room  # log10(1e-3 / 2e-5) = 1.7
    assert client.post(f"/studies/{study}/word-scale/adopt",
                       follow_redirects=False).status_code == 303
    adopted = {row.word: row.value for row in session.exec(select(ScaleWord)).all()}
    assert adopted["remote"] == pytest.approx(remote_means, rel=1e-12)
    assert adopted["unlikely"] == pytest.approx(gmean([1e-2, 1e-3, 4e-3]), rel=1e-12)  # scipy
    status, _reply = _type(client, step, "remote")
    session.refresh(step)
    assert status == 200 and step.value == pytest.approx(remote_means, rel=1e-12)


def test_revealing_or_adopting_a_word_round_too_early_is_refused(client: TestClient,
                                                                 session: Session) -> None:
    step = _layer(session)
    study = step.study_id
    empty = client.post(f"/studies/{study}/word-scale/round")
    assert empty.status_code == 422 and "put the team" in html.unescape(empty.text)
    _save(client, study)
    client.post(f"/studies/{study}/word-scale/round")
    early = client.post(f"/studies/{study}/word-scale/reveal")
    assert early.status_code == 422 and "nobody has answered" in early.text
    adopt = client.post(f"/studies/{study}/word-scale/adopt")
    assert adopt.status_code == 422 and "reveal the word round first" in adopt.text


def test_the_change_log_records_an_adopted_number_as_an_edit_of_its_word(
        client: TestClient, session: Session) -> None:
    step = _layer(session)
    _save(client, step.study_id)
    _save(client, step.study_id, probability="unlikely = 1 in 50\nRemote = 1e-3\ncredible")
    edits = session.exec(select(ChangeLogEntry).where(
        ChangeLogEntry.entity == "word on the scale", ChangeLogEntry.action == "edit")).all()
    assert [(e.field, e.new_value) for e in edits] == [("value", "0.02")]
