"""Estimate rounds, estimates, agreements, dissents and the team word scale travel in the study
file (optional keys of schema version 2): export, import and export again give the same rounds;
an older file without the keys still imports; a refused file names the rule it broke.

External check: the demo's agreed values against scipy.stats.gmean / numpy.median of the
estimates written in the file.
"""

import json
from copy import deepcopy
from typing import Any

import numpy
import pytest
from scipy.stats import gmean
from sqlmodel import Session, col, select

from app.db.models import (
    EstimateRound,
    RoundDissent,
    RoundEstimate,
    RoundState,
    ScaleWord,
    Study,
)
from app.services.estimates import answers, rounds
from app.services.estimates.answers import Answerer
from app.services.exchange.study_file import StudyFileError, export_study
from app.services.exchange.study_file_revisions import expand_revision_parts
from app.services.exchange.study_import import import_study_text
from app.services.record.revisions import freeze_revision
from app.settings import get_settings
from tests.samples import study_count

Data = dict[str, Any]


def _round_trip(session: Session, study_id: int) -> tuple[Data, Data]:
    first = export_study(session, study_id)
    copy = import_study_text(session, json.dumps(first))
    return first, export_study(session, copy.id or 0)


def refused(session: Session, data: Data) -> str:
    """Import `data`; it must be refused and write nothing. Returns the message."""
    before = study_count(session)
    with pytest.raises(StudyFileError) as caught:
        import_study_text(session, json.dumps(data))
    assert study_count(session) == before
    return str(caught.value)


@pytest.fixture
def demo_file(session: Session, demo_study: Study) -> Data:
    return export_study(session, demo_study.id or 0)


def test_the_demo_rounds_and_word_scale_survive_export_import_export(
        session: Session, demo_study: Study) -> None:
    first, second = _round_trip(session, demo_study.id or 0)
    assert first["estimate_rounds"] == second["estimate_rounds"]
    assert first["word_scale"] == second["word_scale"]
    assert len(first["estimate_rounds"]) == 9  # 5 on four steps, 4 on words
    copy_id = session.exec(select(Study.id).order_by(col(Study.id).desc())).first()
    stored = session.exec(select(EstimateRound).where(EstimateRound.study_id == copy_id)).all()
    assert sorted(r.state for r in stored).count(RoundState.AGREED) == 8
    dissent = session.exec(select(RoundDissent).where(RoundDissent.study_id == copy_id)).one()
    assert dissent.person == "Desmond Achterberg"
    words = session.exec(select(ScaleWord).where(ScaleWord.study_id == copy_id)
                         .order_by(col(ScaleWord.position))).all()
    assert [(w.word, w.value) for w in words] == [
        ("rare", 1e-3), ("unlikely", 1e-2), ("possible", 0.1), ("likely", 0.5)]


def _steps_by_ref(data: Data) -> dict[str, list[Data]]:
    return {s["ref"]: s["steps"] for n in data["nodes"] for d in n["deviations"]
            for s in d["scenarios"]}


def test_each_demo_step_round_agrees_with_its_estimates_and_sets_the_step(
        demo_file: Data) -> None:
    steps = _steps_by_ref(demo_file)
    agreed = [r for r in demo_file["estimate_rounds"]
              if r["scenario"] and r["state"] == "agreed"]
    assert len({(r["scenario"], r["step"]) for r in agreed}) >= 4
    for found in agreed:
        values = [e["value"] for e in found["estimates"]]
        expected = {"geometric_mean": gmean(values), "median": numpy.median(values)}
        assert found["agreed_value"] == pytest.approx(expected[found["agreed_method"]],
                                                      rel=1e-12)
        step = steps[found["scenario"]][found["step"] - 1]
        assert step["value"] == pytest.approx(found["agreed_value"], rel=1e-12)
        assert step["basis"].startswith(found["agreed_basis"])
    wide = [r for r in agreed if r["dissents"]]
    assert len(wide) == 1
    values = [e["value"] for e in wide[0]["estimates"]]
    assert numpy.log10(max(values) / min(values)) > 1  # by hand: 0.1 / 0.003, 1.5 decades


def test_an_open_round_is_written_without_its_estimates_or_device(
        session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    step_id = session.exec(select(EstimateRound.step_id).where(
        EstimateRound.study_id == study_id, col(EstimateRound.step_id).is_not(None))).first()
    found = rounds.open_round(session=session, study_id=study_id, step_id=step_id or 0,
                              question="How likely, once more?")
    answers.give_estimate(session=session, study_id=study_id, round_id=found.id or 0,
                          answerer=Answerer("A. Okafor", "device-secret-42"),
                          text="0.0123456")
    text = json.dumps(export_study(session, study_id))
    assert "0.0123456" not in text and "device-secret-42" not in text
    written = [r for r in json.loads(text)["estimate_rounds"] if r["state"] == "open"]
    assert [(r["question"], r["estimates"]) for r in written] == [("How likely, once more?", [])]
    copy = import_study_text(session, text)
    reopened = session.exec(select(EstimateRound).where(
        EstimateRound.study_id == copy.id, EstimateRound.state == RoundState.OPEN)).one()
    assert reopened.question == "How likely, once more?"
    assert not session.exec(select(RoundEstimate).where(
        RoundEstimate.round_id == reopened.id)).all()


def test_a_file_without_rounds_or_word_scale_still_imports(
        session: Session, demo_file: Data) -> None:
    del demo_file["estimate_rounds"], demo_file["word_scale"]
    copy = import_study_text(session, json.dumps(demo_file))
    assert export_study(session, copy.id or 0)["estimate_rounds"] == []


def test_a_frozen_revision_carries_the_rounds_and_an_older_snapshot_stays_as_it_was(
        session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    freeze_revision(session=session, study_id=study_id, frozen_by="T",
                    values={"label": "A", "note": "", "signed_off_by": "T"})
    data = expand_revision_parts(export_study(session, study_id))  # the snapshot embedded
    snapshot = data["revisions"][0]["snapshot"]
    assert snapshot["estimate_rounds"] == data["estimate_rounds"]
    assert snapshot["word_scale"] == data["word_scale"]
    del snapshot["estimate_rounds"], snapshot["word_scale"]  # as frozen before issue 13
    copy = import_study_text(session, json.dumps(data))
    stored = expand_revision_parts(export_study(session, copy.id or 0))["revisions"][0]["snapshot"]
    assert "estimate_rounds" not in stored and "word_scale" not in stored


def _first_round(data: Data) -> Data:
    found: Data = data["estimate_rounds"][0]
    return found


@pytest.mark.parametrize(("change", "rule"), [
    (lambda r: r.update(scenario="S999"), "[round_target]"),
    (lambda r: r.update(step=40), "[round_target]"),
    (lambda r: r.update(word="rare"), "[round_target]"),
    (lambda r: r.update(unit="per_year"), "[round_unit]"),
    (lambda r: r.update(state="open", agreed_value=None, agreed_method=None, dissents=[]),
     "[open_round_private]"),
    (lambda r: r.update(estimates=[]), "[revealed_round_estimates]"),
    (lambda r: r["estimates"].append(dict(r["estimates"][0])), "[one_estimate_each]"),
    (lambda r: r["estimates"][0].update(value=3.0), "[probability_at_most_one]"),
    (lambda r: r.update(agreed_value=None), "[agreed_value]"),
    (lambda r: r.update(state="revealed"), "[agreed_value]"),
    (lambda r: r.update(number=10**30), "number: Input should be less than or equal to 10000"),
])
def test_a_broken_round_is_refused_naming_its_rule(
        session: Session, demo_file: Data, change: Any, rule: str) -> None:
    data = deepcopy(demo_file)
    change(_first_round(data))
    assert rule in refused(session, data)


def test_a_round_listed_twice_is_refused(session: Session, demo_file: Data) -> None:
    demo_file["estimate_rounds"].append(deepcopy(_first_round(demo_file)))
    assert "[round_number_unique]" in refused(session, demo_file)


@pytest.mark.parametrize(("word", "rule"), [("Rare ", "[word_unique]"),
                                            ("1 in 10", "[word_not_a_number]")])
def test_a_word_scale_that_breaks_a_word_rule_is_refused(
        session: Session, demo_file: Data, word: str, rule: str) -> None:
    demo_file["word_scale"].append({"unit": "probability", "word": word, "value": 0.2})
    assert rule in refused(session, demo_file)


def test_a_file_with_more_rounds_than_the_scenario_limit_is_refused(
        session: Session, demo_file: Data, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(get_settings(), "max_import_scenarios", 25)
    demo_file["estimate_rounds"] = [
        {**_first_round(demo_file), "number": number} for number in range(1, 27)]
    message = refused(session, demo_file)
    assert "26 estimate rounds" in message and "at most 25" in message


def test_a_file_with_more_words_than_the_scenario_limit_is_refused(
        session: Session, demo_file: Data, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(get_settings(), "max_import_scenarios", 25)
    demo_file["estimate_rounds"] = []  # the demo's 51 estimates are over 25 as well
    demo_file["word_scale"] = [{"unit": "probability", "word": f"word {chr(97 + n // 26)}"
                                f"{chr(97 + n % 26)}", "value": None} for n in range(26)]
    message = refused(session, demo_file)
    assert "26 words on the word scale" in message and "at most 25" in message
