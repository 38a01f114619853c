"""Estimate rounds as a service: private answers, the reveal, and an agreement that sets the
step's value and basis (and is recorded in the change log).

External checks: the geometric mean against scipy.stats.gmean and the median against
numpy.median; the basis sentence is written out by hand from the estimates.
"""

import numpy
import pytest
from scipy.stats import gmean
from sqlmodel import Session, select

from app.db.models import ChangeLogEntry, RoundDissent, RoundState, Step
from app.likelihood.types import StepKind
from app.services.estimates import agreeing, answers, rounds, views
from app.services.estimates.agreeing import AgreementForm
from app.services.estimates.answers import Answerer
from app.services.study.errors import FieldInputError
from tests.factories import make_scenario_tree, make_step

QUESTION = "What is the probability that the high level alarm fails when needed?"


def _ipl(session: Session) -> Step:
    scenario = make_scenario_tree(session)
    return make_step(session, scenario, kind=StepKind.IPL, value=0.1)


def _opened(session: Session, step: Step) -> int:
    found = rounds.open_round(session=session, study_id=step.study_id, step_id=step.id or 0,
                              question=QUESTION, author="F. Okafor")
    return found.id or 0


def _answer(session: Session, step: Step, round_id: int, person: str, text: str,
            device: str | None) -> None:
    answers.give_estimate(session=session, study_id=step.study_id, round_id=round_id,
                          answerer=Answerer(person, device), text=text)


def test_a_round_is_numbered_per_step_and_takes_the_unit_of_the_step(session: Session) -> None:
    step = _ipl(session)
    first = rounds.open_round(session=session, study_id=step.study_id, step_id=step.id or 0,
                              question="  How   likely? ")
    second = rounds.open_next_round(session=session, study_id=step.study_id,
                                    round_id=first.id or 0)
    assert (first.number, second.number) == (1, 2)
    assert first.question == "How likely?" == second.question
    assert first.unit == "probability"


def test_an_initiating_event_round_asks_per_year_and_reads_once_in_20_years(
        session: Session) -> None:
    scenario = make_scenario_tree(session)
    event = session.exec(select(Step).where(Step.scenario_id == scenario.id)).one()
    round_id = _opened(session, event)
    parsed = answers.give_estimate(session=session, study_id=event.study_id, round_id=round_id,
                                   answerer=Answerer("A. Lind", "dev-a"),
                                   text="once in 20 years")
    assert parsed.value == pytest.approx(1 / 20)  # by hand: 1 event in 20 years


def test_a_round_needs_its_question(session: Session) -> None:
    step = _ipl(session)
    with pytest.raises(FieldInputError, match="question in words"):
        rounds.open_round(session=session, study_id=step.study_id, step_id=step.id or 0,
                          question="   ")


def test_an_open_round_shows_who_answered_and_never_what(session: Session) -> None:
    step = _ipl(session)
    round_id = _opened(session, step)
    _answer(session, step, round_id, "A. Lind", "1 in 1000", "dev-a")
    _answer(session, step, round_id, "B. Osei", "0.5%", None)
    view = views.round_page(session=session, study_id=step.study_id, round_id=round_id).current
    assert view.answered == (("A. Lind", False), ("B. Osei", True))
    assert view.stats is None and view.marks == ()


def test_a_device_changes_only_its_own_estimate(session: Session) -> None:
    step = _ipl(session)
    round_id = _opened(session, step)
    _answer(session, step, round_id, "A. Lind", "1 in 1000", "dev-a")
    _answer(session, step, round_id, "A. Lind", "1 in 100", "dev-a")  # changes own answer
    with pytest.raises(FieldInputError, match="already answered"):
        _answer(session, step, round_id, "A. Lind", "1 in 10", "dev-b")
    with pytest.raises(FieldInputError, match="already answered"):
        _answer(session, step, round_id, "A. Lind", "1 in 10", None)  # not even the scribe
    mine = answers.own_estimate(session, round_id, Answerer("A. Lind", "dev-a"))
    theirs = answers.own_estimate(session, round_id, Answerer("A. Lind", "dev-b"))
    assert mine is not None and mine.value == pytest.approx(0.01) and theirs is None


def test_an_estimate_that_is_no_probability_is_refused_and_nothing_is_saved(
        session: Session) -> None:
    step = _ipl(session)
    round_id = _opened(session, step)
    with pytest.raises(FieldInputError):
        _answer(session, step, round_id, "A. Lind", "3 in 2", "dev-a")
    with pytest.raises(FieldInputError, match="Reveal: nobody has answered"):
        rounds.reveal_round(session=session, study_id=step.study_id, round_id=round_id)


def test_a_revealed_round_takes_no_more_answers(session: Session) -> None:
    step = _ipl(session)
    round_id = _opened(session, step)
    _answer(session, step, round_id, "A. Lind", "1e-3", "dev-a")
    rounds.reveal_round(session=session, study_id=step.study_id, round_id=round_id)
    with pytest.raises(FieldInputError, match="closed"):
        _answer(session, step, round_id, "B. Osei", "1e-2", "dev-b")


ESTIMATES = {"A. Lind": "1 in 1000", "B. Osei": "1e-2", "C. Ruiz": "0.3%"}
VALUES = [1e-3, 1e-2, 3e-3]


def _revealed(session: Session) -> tuple[Step, int]:
    step = _ipl(session)
    round_id = _opened(session, step)
    for number, (person, text) in enumerate(ESTIMATES.items()):
        _answer(session, step, round_id, person, text, f"dev-{number}")
    rounds.reveal_round(session=session, study_id=step.study_id, round_id=round_id)
    return step, round_id


def test_the_reveal_gives_every_mark_and_the_figures(session: Session) -> None:
    step, round_id = _revealed(session)
    view = views.round_page(session=session, study_id=step.study_id, round_id=round_id).current
    assert view.stats is not None
    assert [mark.value for mark in view.marks] == VALUES
    assert view.stats.geometric_mean == pytest.approx(gmean(VALUES), rel=1e-12)  # scipy
    assert view.stats.median == pytest.approx(numpy.median(VALUES))  # numpy
    assert view.stats.spread_orders == pytest.approx(1.0)  # by hand: log10(1e-2 / 1e-3)
    assert [mark.person for mark in view.marks] == list(ESTIMATES)
    rounds.set_names_shown(session=session, study_id=step.study_id, round_id=round_id,
                           shown=False)
    hidden = views.round_page(session=session, study_id=step.study_id, round_id=round_id)
    assert [mark.person for mark in hidden.current.marks] == [None, None, None]


def test_agreeing_on_the_geometric_mean_sets_the_step_value_basis_and_change_log(
        session: Session) -> None:
    step, round_id = _revealed(session)
    form = AgreementForm("geometric_mean", dissent_lines="B. Osei: vendor data says 1e-2\n\n")
    agreeing.agree_round(session=session, study_id=step.study_id, round_id=round_id, form=form)
    session.refresh(step)
    expected = gmean(VALUES)  # scipy: (1e-3 · 1e-2 · 3e-3)^(1/3) = 3.107e-3
    assert step.value == pytest.approx(expected, rel=1e-12)
    assert step.value_text == "3.1e-3"
    assert step.basis == ("agreed in round 1 from 3 estimates, 1.0e-3 to 1.0e-2, "
                          "geometric mean 3.1e-3; B. Osei dissents: vendor data says 1e-2")
    logged = session.exec(select(ChangeLogEntry.field).where(
        ChangeLogEntry.entity == "step", ChangeLogEntry.entity_id == step.id)).all()
    assert {"value", "basis"} <= set(logged)
    dissent = session.exec(select(RoundDissent)).one()
    assert (dissent.person, dissent.reason) == ("B. Osei", "vendor data says 1e-2")
    found = rounds.get_round(session, step.study_id, round_id)
    assert found.state == RoundState.AGREED and found.agreed_method == "geometric_mean"


def test_agreeing_on_the_median_or_a_typed_value(session: Session) -> None:
    step, round_id = _revealed(session)
    form = AgreementForm("typed", typed_text="1 in 500")
    agreeing.agree_round(session=session, study_id=step.study_id, round_id=round_id, form=form)
    session.refresh(step)
    assert step.value == pytest.approx(0.002)
    assert "typed value 2.0e-3 (geometric mean 3.1e-3)" in step.basis
    other_step, other_round = _revealed(session)
    agreeing.agree_round(session=session, study_id=other_step.study_id, round_id=other_round,
                         form=AgreementForm("median"))
    session.refresh(other_step)
    assert other_step.value == pytest.approx(numpy.median(VALUES))  # numpy: 3e-3


@pytest.mark.parametrize(("form", "rule"), [
    (AgreementForm("typed", typed_text=""), "Agreed value"),
    (AgreementForm("typed", typed_text="2"), "Agreed value"),
    (AgreementForm("loudest"), "choose the geometric mean"),
    (AgreementForm("median", dissent_lines=": no name"), "person's name"),
])
def test_a_bad_agreement_is_refused_and_the_step_keeps_its_value(
        session: Session, form: AgreementForm, rule: str) -> None:
    step, round_id = _revealed(session)
    with pytest.raises(FieldInputError, match=rule):
        agreeing.agree_round(session=session, study_id=step.study_id, round_id=round_id,
                             form=form)
    session.refresh(step)
    assert step.value == 0.1 and step.basis == ""
    assert rounds.get_round(session, step.study_id, round_id).state == RoundState.REVEALED


def test_an_open_round_cannot_be_agreed(session: Session) -> None:
    step = _ipl(session)
    round_id = _opened(session, step)
    _answer(session, step, round_id, "A. Lind", "1e-3", "dev-a")
    with pytest.raises(FieldInputError, match="reveal the round first"):
        agreeing.agree_round(session=session, study_id=step.study_id, round_id=round_id,
                             form=AgreementForm("median"))
