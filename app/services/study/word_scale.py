"""The study's adopted word scale, shared by every value field (worksheet) and its settings page.

An adopted word typed in a value field gives the adopted number; the step's basis then records
the word (likelihood/word_scale.word_basis). A word not on the scale is refused with the list.
"""

from sqlmodel import Session, col, select

from app.db.models import ScaleWord, Step
from app.likelihood.estimates import EstimateUnit, unit_for_kind
from app.likelihood.word_scale import (
    AdoptedWord,
    WordedNumber,
    WordScale,
    may_be_word,
    parse_with_word_scale,
    word_basis,
)


def study_word_scale(session: Session, study_id: int, unit: EstimateUnit) -> WordScale | None:
    """The adopted words of the study for the unit, in the team's order; None when none."""
    rows = session.exec(select(ScaleWord).where(ScaleWord.study_id == study_id,
                                                ScaleWord.unit == unit.value,
                                                col(ScaleWord.value).is_not(None))
                        .order_by(col(ScaleWord.position), col(ScaleWord.id))).all()
    if not rows:
        return None
    return WordScale(unit, tuple(AdoptedWord(row.word, row.value or 0.0) for row in rows))


def read_step_text(session: Session, step: Step, text: str, label: str) -> WordedNumber:
    """The typed text as the step's value: an adopted word or a number said as people say it."""
    unit = unit_for_kind(step.kind)
    # Typed text with a digit is never an adopted word (the scale refuses such words), so a
    # keystroke of a number does not read the scale.
    scale = study_word_scale(session, step.study_id, unit) if may_be_word(text) else None
    return parse_with_word_scale(text, unit, scale, label)


def basis_with_word(basis: str, worded: WordedNumber) -> str:
    """The basis with the word-scale note added once (unchanged when no word was typed)."""
    if worded.word is None:
        return basis
    note = word_basis(worded.word)
    if note in basis:
        return basis
    return f"{basis.rstrip()}; {note}" if basis.strip() else note
