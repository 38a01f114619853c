"""A round's life: opened on a step, answered in private, revealed, run again if need be.

Every change here commits. Rounds are not in the change log (editors read it while a round is
open); agreeing (agreeing.py) writes the step, and that edit is logged.
"""

from sqlalchemy import update
from sqlmodel import Session, col, func, select

from app.db.models import (
    EstimateRound,
    RoundDissent,
    RoundEstimate,
    RoundState,
    ScaleWord,
    Step,
    text_limit,
    utc_now,
)
from app.likelihood.estimates import EstimateUnit, RoundStats, round_stats, unit_for_kind
from app.services.study.errors import FieldInputError, length_problem
from app.services.study.tree import NotFoundError, get_study


def get_step(session: Session, study_id: int, step_id: int) -> Step:
    """The study's step, or NotFoundError."""
    step = session.get(Step, step_id)
    if step is None or step.study_id != study_id:
        raise NotFoundError(f"There is no step {step_id} in study {study_id}.")
    return step


def get_round(session: Session, study_id: int, round_id: int) -> EstimateRound:
    """The study's round, or NotFoundError."""
    found = session.get(EstimateRound, round_id)
    if found is None or found.study_id != study_id:
        raise NotFoundError(f"There is no estimate round {round_id} in study {study_id}.")
    return found


def _checked_question(question: str) -> str:
    text = " ".join(question.split())
    if not text:
        raise FieldInputError("question", "Question: a round needs its question in words.")
    problem = length_problem(text, text_limit(EstimateRound, "question"))
    if problem:
        raise FieldInputError("question", f"Question: {problem}")
    return text


def open_round(*, session: Session, study_id: int, step_id: int, question: str,
               author: str = "") -> EstimateRound:
    """A new open round on the step, numbered after the step's earlier rounds."""
    get_study(session, study_id)
    step = get_step(session, study_id, step_id)
    text = _checked_question(question)
    count = session.exec(select(func.count()).select_from(EstimateRound)
                         .where(EstimateRound.step_id == step_id)).one()
    created = EstimateRound(study_id=study_id, step_id=step_id, number=count + 1,
                            question=text, unit=unit_for_kind(step.kind).value,
                            opened_by=author[:120])
    session.add(created)
    session.commit()
    session.refresh(created)
    return created


def open_next_round(*, session: Session, study_id: int, round_id: int,
                    author: str = "") -> EstimateRound:
    """Another round on the same step (or word) and question, after the room has talked."""
    earlier = get_round(session, study_id, round_id)
    if earlier.step_id is None:
        return _open_word_round(session, earlier.study_id, earlier.word or "", earlier.unit,
                                author)
    return open_round(session=session, study_id=study_id, step_id=earlier.step_id,
                      question=earlier.question, author=author)


def word_question(word: str, unit: str) -> str:
    """The question of a word round, in the unit of the word's list."""
    if unit == EstimateUnit.PER_YEAR.value:
        return f"How often per year is something that is “{word}”?"
    return f"What probability do you mean by “{word}”?"


def _open_word_round(session: Session, study_id: int, word: str, unit: str,
                     author: str) -> EstimateRound:
    count = session.exec(select(func.count()).select_from(EstimateRound)
                         .where(EstimateRound.study_id == study_id,
                                EstimateRound.word == word, EstimateRound.unit == unit)).one()
    created = EstimateRound(study_id=study_id, step_id=None, word=word, number=count + 1,
                            question=word_question(word, unit), unit=unit,
                            opened_by=author[:120])
    session.add(created)
    session.commit()
    session.refresh(created)
    return created


def open_word_rounds(*, session: Session, study_id: int, author: str = "") -> int:
    """A private round on every word of the team's list; how many were opened."""
    get_study(session, study_id)
    words = session.exec(select(ScaleWord).where(ScaleWord.study_id == study_id)
                         .order_by(col(ScaleWord.unit), col(ScaleWord.position))).all()
    if not words:
        raise FieldInputError("words", "Word round: put the team's words on the list first.")
    for row in words:
        _open_word_round(session, study_id, row.word, row.unit, author)
    return len(words)


def estimates_of(session: Session, round_id: int) -> list[RoundEstimate]:
    """The round's estimates in the order they first came."""
    return list(session.exec(select(RoundEstimate).where(RoundEstimate.round_id == round_id)
                             .order_by(col(RoundEstimate.id))))


def dissents_of(session: Session, round_id: int) -> list[RoundDissent]:
    """The round's dissents in the order they were written."""
    return list(session.exec(select(RoundDissent).where(RoundDissent.round_id == round_id)
                             .order_by(col(RoundDissent.position), col(RoundDissent.id))))


def stats_of(found: EstimateRound, estimates: list[RoundEstimate]) -> RoundStats | None:
    """The round's figures, or None while nobody has answered."""
    if not estimates:
        return None
    return round_stats([estimate.value for estimate in estimates], unit_for(found))


def unit_for(found: EstimateRound) -> EstimateUnit:
    """The round's unit as the likelihood package names it."""
    return EstimateUnit(found.unit)


def reveal_round(*, session: Session, study_id: int, round_id: int) -> EstimateRound:
    """Show every estimate to the room; a round nobody answered cannot be revealed."""
    found = get_round(session, study_id, round_id)
    if found.state != RoundState.OPEN:
        return found
    if not estimates_of(session, round_id):
        raise FieldInputError("reveal", "Reveal: nobody has answered this round yet.")
    if claim_state(session, found, RoundState.OPEN, RoundState.REVEALED):
        session.commit()
    else:
        session.rollback()  # another screen revealed it first: show the round as it is now
    session.refresh(found)
    return found


def claim_state(session: Session, found: EstimateRound, before: RoundState,
                after: RoundState) -> bool:
    """Move the round from `before` to `after` in one guarded UPDATE; False (nothing written)
    when another screen moved it first.

    Reading the state and then writing it would let two screens both pass the check and the
    later one silently win (agreeing twice, say); the guarded UPDATE lets one through.
    """
    claimed = session.execute(
        update(EstimateRound)
        .where(col(EstimateRound.id) == found.id, col(EstimateRound.state) == before)
        .values(state=after, updated_at=utc_now())
        .execution_options(synchronize_session=False))
    if claimed.rowcount != 1:  # type: ignore[attr-defined]
        return False
    found.state = after
    return True


def set_names_shown(*, session: Session, study_id: int, round_id: int,
                    shown: bool) -> EstimateRound:
    """Show each mark's name on the room view, or hide them all."""
    found = get_round(session, study_id, round_id)
    found.names_shown = shown
    _touch(session, found)
    return found


def _touch(session: Session, found: EstimateRound) -> None:
    found.updated_at = utc_now()
    session.add(found)
    session.commit()
    session.refresh(found)

