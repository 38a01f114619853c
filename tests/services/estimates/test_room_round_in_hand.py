"""The room view shows the round in hand: once a second round on a step is agreed, the
revealed first round stays on the step's record but is no longer shown as in hand."""

from sqlmodel import Session

from app.likelihood.types import StepKind
from app.services.estimates import agreeing, answers, rounds, views
from app.services.estimates.agreeing import AgreementForm
from app.services.estimates.answers import Answerer
from tests.factories import make_scenario_tree, make_step


def _answered_and_revealed(session: Session, study_id: int, round_id: int) -> None:
    for person, text in (("A. Lind", "1e-3"), ("B. Osei", "1e-2")):
        answers.give_estimate(session=session, study_id=study_id, round_id=round_id,
                              answerer=Answerer(person, None), text=text)
    rounds.reveal_round(session=session, study_id=study_id, round_id=round_id)


def test_an_agreed_second_round_takes_the_first_off_the_room_view(session: Session) -> None:
    step = make_step(session, make_scenario_tree(session), kind=StepKind.IPL, value=0.1)
    first = rounds.open_round(session=session, study_id=step.study_id, step_id=step.id or 0,
                              question="How likely is it to fail on demand?")
    _answered_and_revealed(session, step.study_id, first.id or 0)
    assert [v.round.id for v in views.room_rounds(session=session,
                                                  study_id=step.study_id)] == [first.id]
    second = rounds.open_next_round(session=session, study_id=step.study_id,
                                    round_id=first.id or 0)
    assert [v.round.id for v in views.room_rounds(session=session,
                                                  study_id=step.study_id)] == [second.id]
    _answered_and_revealed(session, step.study_id, second.id or 0)
    agreeing.agree_round(session=session, study_id=step.study_id, round_id=second.id or 0,
                         form=AgreementForm("median"))
    assert views.room_rounds(session=session, study_id=step.study_id) == ()
    page = views.round_page(session=session, study_id=step.study_id, round_id=second.id or 0)
    assert [v.round.number for v in page.others] == [1]  # round 1 stays on the record
