"""The team's word list and the numbers it adopts, edited as lines of "word = number".

A line with only a word keeps the word on the list without a number (typing it in a value
field is then refused). Every adopted line is checked by likelihood/word_scale.adopt_word_scale:
no empty or repeated word, no word that reads as a number, a number valid for the unit.
"""

from dataclasses import dataclass

from sqlmodel import Session, col, select

from app.db.models import EstimateRound, RoundState, ScaleWord, utc_now
from app.likelihood.estimates import EstimateUnit
from app.likelihood.numbers import format_number
from app.likelihood.types import LikelihoodInputError
from app.likelihood.word_scale import adopt_word_scale, normalise_word
from app.services.estimates.reading import parse_estimate
from app.services.estimates.rounds import estimates_of, stats_of
from app.services.study.errors import FieldInputError, nul_problem
from app.services.study.tree import get_study

WORD_LIMIT = 60
_STAND_IN = 0.5


@dataclass(frozen=True)
class WordLine:
    """One line of the list: the word and the adopted number, if any."""

    word: str
    value: float | None


def _line(text: str, unit: EstimateUnit, field: str) -> WordLine:
    word, _, number = text.partition("=")
    word = " ".join(word.split())
    if len(word) > WORD_LIMIT:
        raise FieldInputError(field, f"'{word[:20]}…': a word has at most {WORD_LIMIT} "
                                     "characters.")
    if not number.strip():
        return WordLine(word, None)
    return WordLine(word, parse_estimate(number, unit, f"Word '{word}'").value)


def read_word_lines(text: str, unit: EstimateUnit, field: str) -> tuple[WordLine, ...]:
    """The lines as words and numbers, checked as one scale; FieldInputError names the rule."""
    if problem := nul_problem(text):
        raise FieldInputError(field, f"The word list {problem}")
    try:
        lines = tuple(_line(raw, unit, field) for raw in text.splitlines() if raw.strip())
        # Words not yet adopted obey the same word rules (not empty, not repeated, not a
        # number): check them with a stand-in number valid in both units.
        adopt_word_scale([(line.word, line.value or _STAND_IN) for line in lines], unit)
    except FieldInputError as error:
        raise FieldInputError(field, error.message) from error
    except LikelihoodInputError as error:
        raise FieldInputError(field, error.message) from error
    return lines


def save_word_list(*, session: Session, study_id: int, unit: EstimateUnit, text: str) -> None:
    """Make the study's words for the unit match the lines (nothing saved if one is wrong).

    Words are matched by their compared form, so the change log shows a changed number as an
    edit of that word, and only words really removed or added as such.
    """
    get_study(session, study_id)
    lines = read_word_lines(text, unit, unit.value)
    saved = {normalise_word(row.word): row for row in session.exec(
        select(ScaleWord).where(ScaleWord.study_id == study_id, ScaleWord.unit == unit.value))}
    for position, line in enumerate(lines):
        row = saved.pop(normalise_word(line.word), None) or ScaleWord(
            study_id=study_id, unit=unit.value, word=line.word)
        row.word, row.value, row.position = line.word, line.value, position
        session.add(row)
    for removed in saved.values():
        session.delete(removed)
    session.commit()


def word_list_text(session: Session, study_id: int, unit: EstimateUnit) -> str:
    """The saved list as the form shows it: "word = 1.0e-2" per line."""
    rows = session.exec(select(ScaleWord).where(ScaleWord.study_id == study_id,
                                                ScaleWord.unit == unit.value)
                        .order_by(col(ScaleWord.position), col(ScaleWord.id))).all()
    return "\n".join(f"{row.word} = {format_number(row.value)}" if row.value else row.word
                     for row in rows)


def reveal_word_rounds(*, session: Session, study_id: int) -> int:
    """Reveal every open word round that has an answer; how many were revealed."""
    opened = session.exec(select(EstimateRound).where(
        EstimateRound.study_id == study_id, col(EstimateRound.step_id).is_(None),
        EstimateRound.state == RoundState.OPEN)).all()
    answered = [r for r in opened if estimates_of(session, r.id or 0)]
    if not answered:
        raise FieldInputError("words", "Reveal: nobody has answered the word round yet.")
    for found in answered:
        found.state, found.updated_at = RoundState.REVEALED, utc_now()
        session.add(found)
    session.commit()
    return len(answered)


def adopt_word_means(*, session: Session, study_id: int) -> int:
    """Adopt each revealed word's geometric mean as its number (the team may then edit the
    list); the rounds are closed as agreed. How many words were adopted."""
    revealed = session.exec(select(EstimateRound).where(
        EstimateRound.study_id == study_id, col(EstimateRound.step_id).is_(None),
        EstimateRound.state == RoundState.REVEALED)).all()
    if not revealed:
        raise FieldInputError("words", "Adopt: reveal the word round first.")
    for found in revealed:
        stats = stats_of(found, estimates_of(session, found.id or 0))
        word = session.exec(select(ScaleWord).where(
            ScaleWord.study_id == study_id, ScaleWord.unit == found.unit,
            ScaleWord.word == found.word)).first()
        if stats is None or word is None:  # the word left the list since the round opened
            continue
        word.value = stats.geometric_mean
        found.state, found.agreed_method = RoundState.AGREED, "geometric_mean"
        found.agreed_value, found.updated_at = stats.geometric_mean, utc_now()
        found.agreed_basis = (f"adopted for '{found.word}' from {stats.count} estimates, "
                              f"geometric mean {format_number(stats.geometric_mean)}")
        session.add_all([word, found])
    session.commit()
    return len(revealed)
