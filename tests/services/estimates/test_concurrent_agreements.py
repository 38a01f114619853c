"""Two facilitator screens agreeing, or revealing, one round at the same moment: one agreement
is recorded and the other screen is told, never both written with the later one winning.

The race is made certain, not left to timing: each thread has read the round as revealed and
built its agreement, then waits at a barrier until both have, so both go on to write. The
guarded state change (`rounds.claim_state`) lets exactly one through on SQLite (the second
UPDATE waits for the first transaction's write lock, then matches no row) and PostgreSQL (it
waits on the row lock, then re-reads the row and matches nothing).
"""

import threading
from collections.abc import Callable
from typing import Any

import pytest
from sqlalchemy import Engine
from sqlmodel import Session, select

from app.db.models import EstimateRound, RoundDissent, RoundState, Step
from app.likelihood.types import StepKind
from app.services.estimates import agreeing, answers, rounds
from app.services.estimates.agreeing import AgreementForm
from app.services.estimates.answers import Answerer
from app.services.study.errors import FieldInputError
from tests.factories import make_scenario_tree, make_step


def _revealed_round(session: Session) -> tuple[int, int, int]:
    scenario = make_scenario_tree(session)
    step: Step = make_step(session, scenario, kind=StepKind.IPL, value=0.1)
    found = rounds.open_round(session=session, study_id=step.study_id, step_id=step.id or 0,
                              question="How often does the alarm fail when needed?")
    for person, text in (("A. Lind", "1e-2"), ("B. Osei", "1e-1")):
        answers.give_estimate(session=session, study_id=step.study_id, round_id=found.id or 0,
                              answerer=Answerer(person, None), text=text)
    rounds.reveal_round(session=session, study_id=step.study_id, round_id=found.id or 0)
    return step.study_id, step.id or 0, found.id or 0


def _both_build_before_either_writes(monkeypatch: pytest.MonkeyPatch) -> None:
    both_built = threading.Barrier(2, timeout=10)
    original: Callable[..., Any] = agreeing.build_agreement

    def built_then_wait(*args: Any) -> Any:
        built = original(*args)
        both_built.wait()
        return built

    monkeypatch.setattr(agreeing, "build_agreement", built_then_wait)


def _at_once(db_engine: Engine, calls: list[Callable[[Session], object]]
             ) -> list[BaseException | None]:
    outcomes: list[BaseException | None] = [None] * len(calls)

    def run(index: int) -> None:
        try:
            with Session(db_engine) as own:
                calls[index](own)
        except BaseException as error:  # the outcome is the subject: keep whatever it is
            outcomes[index] = error

    threads = [threading.Thread(target=run, args=(i,)) for i in range(len(calls))]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    return outcomes


def test_two_screens_agreeing_at_once_record_one_agreement_and_tell_the_other(
        session: Session, db_engine: Engine, monkeypatch: pytest.MonkeyPatch) -> None:
    study_id, step_id, round_id = _revealed_round(session)
    _both_build_before_either_writes(monkeypatch)
    forms = [AgreementForm("typed", typed_text="3e-2", dissent_lines="B. Osei: too low"),
             AgreementForm("typed", typed_text="5e-2", dissent_lines="A. Lind: too high")]

    def agree(form: AgreementForm) -> Callable[[Session], object]:
        return lambda own: agreeing.agree_round(session=own, study_id=study_id,
                                                round_id=round_id, form=form)

    outcomes = _at_once(db_engine, [agree(forms[0]), agree(forms[1])])
    refused = [o for o in outcomes if o is not None]
    assert len(refused) == 1 and isinstance(refused[0], FieldInputError)
    assert "agreed on another screen" in str(refused[0])
    winner = outcomes.index(None)
    session.expire_all()
    step = session.get(Step, step_id)
    found = session.get(EstimateRound, round_id)
    assert step is not None and found is not None
    assert step.value == pytest.approx((3e-2, 5e-2)[winner])
    assert found.state == RoundState.AGREED
    assert found.agreed_value == pytest.approx((3e-2, 5e-2)[winner])
    dissents = session.exec(select(RoundDissent.person)).all()
    assert dissents == [("B. Osei", "A. Lind")[winner]]  # the loser's dissent is not added


def test_two_screens_revealing_at_once_both_see_the_revealed_round(
        session: Session, db_engine: Engine) -> None:
    scenario = make_scenario_tree(session)
    step: Step = make_step(session, scenario, kind=StepKind.IPL, value=0.1)
    found = rounds.open_round(session=session, study_id=step.study_id, step_id=step.id or 0,
                              question="How often does the alarm fail when needed?")
    answers.give_estimate(session=session, study_id=step.study_id, round_id=found.id or 0,
                          answerer=Answerer("A. Lind", None), text="1e-2")
    study_id, round_id = step.study_id, found.id or 0  # read here: threads use their own sessions

    def reveal(own: Session) -> object:
        shown = rounds.reveal_round(session=own, study_id=study_id, round_id=round_id)
        assert shown.state == RoundState.REVEALED
        return shown

    assert _at_once(db_engine, [reveal, reveal]) == [None, None]
