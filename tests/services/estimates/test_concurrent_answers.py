"""Two devices sending the same participant name at the same moment: the unique index
(round, person) admits one estimate, and the other device gets a clear answer, never a
server error.

The race is made certain, not left to timing: each thread reads "no estimate yet" and then
waits at a barrier until both have read, so both go on to insert. On SQLite the second
INSERT waits for the first transaction's write lock and then breaks the unique index; on
PostgreSQL it waits on the index entry and breaks it the same way (IntegrityError both).
"""

import threading
from collections.abc import Callable
from typing import Any

import pytest
from sqlalchemy import Engine
from sqlmodel import Session, select

from app.db.models import RoundEstimate, Step
from app.likelihood.types import StepKind
from app.services.estimates import answers, rounds
from app.services.estimates.answers import Answerer
from app.services.study.errors import FieldInputError
from tests.factories import make_scenario_tree, make_step


def _open_round(session: Session) -> tuple[int, int]:
    scenario = make_scenario_tree(session)
    step: Step = make_step(session, scenario, kind=StepKind.IPL, value=0.1)
    found = rounds.open_round(session=session, study_id=step.study_id, step_id=step.id or 0,
                              question="How often does the alarm fail when needed?")
    return step.study_id, found.id or 0


def _both_read_before_either_writes(monkeypatch: pytest.MonkeyPatch) -> None:
    """Hold each thread after its first look for an existing estimate until both have looked."""
    both_looked = threading.Barrier(2, timeout=10)
    first_look = threading.local()
    original: Callable[..., Any] = answers._existing

    def looked_then_wait(*args: Any) -> Any:
        found = original(*args)
        if not getattr(first_look, "done", False):
            first_look.done = True
            both_looked.wait()
        return found

    monkeypatch.setattr(answers, "_existing", looked_then_wait)


def _answer_at_once(db_engine: Engine, study_id: int, round_id: int,
                    sent: list[tuple[Answerer, str]]) -> list[BaseException | None]:
    outcomes: list[BaseException | None] = [None] * len(sent)

    def answer(index: int) -> None:
        answerer, text = sent[index]
        try:
            with Session(db_engine) as own:
                answers.give_estimate(session=own, study_id=study_id, round_id=round_id,
                                      answerer=answerer, text=text)
        except BaseException as error:  # the outcome is the subject: keep whatever it is
            outcomes[index] = error

    threads = [threading.Thread(target=answer, args=(i,)) for i in range(len(sent))]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    return outcomes


def test_two_devices_with_one_name_at_once_save_one_and_tell_the_other(
        session: Session, db_engine: Engine, monkeypatch: pytest.MonkeyPatch) -> None:
    study_id, round_id = _open_round(session)
    _both_read_before_either_writes(monkeypatch)
    outcomes = _answer_at_once(db_engine, study_id, round_id, [
        (Answerer("A. Lind", "device-one"), "1 in 100"),
        (Answerer("A. Lind", "device-two"), "1 in 10")])
    refused = [o for o in outcomes if o is not None]
    assert len(refused) == 1 and isinstance(refused[0], FieldInputError)
    assert "A. Lind has already answered this round from another device" in str(refused[0])
    session.expire_all()
    saved = session.exec(select(RoundEstimate).where(RoundEstimate.round_id == round_id)).all()
    assert len(saved) == 1
    winner = outcomes.index(None)
    assert saved[0].session_id == ("device-one", "device-two")[winner]
    assert saved[0].value == pytest.approx((0.01, 0.1)[winner])


def test_one_device_sending_twice_at_once_keeps_one_estimate_without_an_error(
        session: Session, db_engine: Engine, monkeypatch: pytest.MonkeyPatch) -> None:
    study_id, round_id = _open_round(session)
    _both_read_before_either_writes(monkeypatch)
    outcomes = _answer_at_once(db_engine, study_id, round_id, [
        (Answerer("A. Lind", "device-one"), "1 in 100"),
        (Answerer("A. Lind", "device-one"), "1 in 100")])  # a double tap
    assert outcomes == [None, None]
    session.expire_all()
    saved = session.exec(select(RoundEstimate).where(RoundEstimate.round_id == round_id)).all()
    assert [(e.person, e.value) for e in saved] == [("A. Lind", pytest.approx(0.01))]
