"""A team word scale: what each person means by "rare" or "unlikely", and the number adopted.

Typing an adopted word into a value field gives the adopted number; any other text goes to the
number parser (numbers.py) unchanged, and a word that is neither refuses with the adopted list.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from app.likelihood.estimates import (
    EstimateUnit,
    RoundStats,
    round_stats,
    validate_estimate,
)
from app.likelihood.numbers import ParsedNumber, format_number, parse_frequency, parse_probability
from app.likelihood.types import LikelihoodInputError, input_error


def normalise_word(text: str) -> str:
    """A word as compared: case-folded, inner spaces collapsed ("Very  Rare " -> "very rare")."""
    return " ".join(text.casefold().split())


def parse_number(text: str, unit: EstimateUnit, label: str = "") -> ParsedNumber:
    """The existing number parser for the unit: per year or a probability."""
    if unit == EstimateUnit.PER_YEAR:
        return parse_frequency(text, label)
    return parse_probability(text, label)


@dataclass(frozen=True)
class WordSpread:
    """One word's round: every person's number for it and the round's figures."""

    word: str
    stats: RoundStats


def word_spreads(
    estimates_by_word: Mapping[str, Sequence[float]], unit: EstimateUnit
) -> tuple[WordSpread, ...]:
    """The figures of each word's estimates, in the order the words were given."""
    return tuple(
        WordSpread(word, _word_stats(word, values, unit))
        for word, values in estimates_by_word.items()
    )


def _word_stats(word: str, values: Sequence[float], unit: EstimateUnit) -> RoundStats:
    try:
        return round_stats(values, unit)
    except LikelihoodInputError as error:
        raise input_error(error.rule, f"'{word}': {error.message}", label="Word scale") from error


@dataclass(frozen=True)
class AdoptedWord:
    """A word the team adopted and the number it stands for in this study."""

    word: str
    value: float


@dataclass(frozen=True)
class WordScale:
    """The adopted words of a study for one unit (per year or probability)."""

    unit: EstimateUnit
    words: tuple[AdoptedWord, ...]

    def lookup(self, text: str) -> AdoptedWord | None:
        """The adopted word matching the text (case and spacing ignored), or None."""
        wanted = normalise_word(text)
        return next((w for w in self.words if normalise_word(w.word) == wanted), None)

    def listing(self) -> str:
        """The adopted words with their numbers: "rare (1.0e-4), unlikely (1.0e-2)"."""
        return ", ".join(f"{w.word} ({format_number(w.value)})" for w in self.words)


def _check_word(word: str, unit: EstimateUnit, seen: set[str]) -> None:
    said = normalise_word(word)
    if not said:
        raise input_error("word_required", "an adopted word must not be empty.", label="Word scale")
    if said in seen:
        raise input_error(
            "word_unique",
            f"'{word}' is adopted twice (case and spaces ignored).",
            label="Word scale",
        )
    if not may_be_word(said) or _reads_as_number(said, unit):
        raise input_error(
            "word_not_a_number",
            f"'{word}' reads as a number, so it cannot stand for another one.",
            label="Word scale",
        )


def _reads_as_number(text: str, unit: EstimateUnit) -> bool:
    try:
        parse_number(text, unit)
    except LikelihoodInputError as error:
        return error.rule != "not_a_number"  # e.g. "one": a number, only out of range
    return True


def adopt_word_scale(adopted: Sequence[tuple[str, float]], unit: EstimateUnit) -> WordScale:
    """Check the team's words and numbers and return the scale (words stripped, order kept)."""
    seen: set[str] = set()
    words = []
    for word, value in adopted:
        _check_word(word, unit, seen)
        seen.add(normalise_word(word))
        checked = validate_estimate(value, unit, f"Word '{word.strip()}'")
        words.append(AdoptedWord(" ".join(word.split()), checked))
    return WordScale(unit, tuple(words))


@dataclass(frozen=True)
class WordedNumber:
    """A value read from a field: the number as parsed and the adopted word, if one was typed."""

    number: ParsedNumber
    word: AdoptedWord | None


def _from_word(typed: str, found: AdoptedWord, unit: EstimateUnit) -> WordedNumber:
    restated = parse_number(repr(found.value), unit).plain
    plain = f"'{found.word}' on the team's word scale = {restated}"
    return WordedNumber(ParsedNumber(found.value, typed, plain), found)


def may_be_word(text: str) -> bool:
    """Whether text could be an adopted word: none holds a digit (rule word_not_a_number)."""
    return re.search(r"\d", text) is None


def parse_with_word_scale(
    text: str, unit: EstimateUnit, scale: WordScale | None, label: str = ""
) -> WordedNumber:
    """An adopted word gives its number; other text goes to the number parser for the unit.

    Text the parser cannot read and that holds no digit is taken as a word: it is refused with
    the list of adopted words. A scale for the other unit is not used for this field.
    """
    typed = text.strip()
    usable = scale if scale is not None and scale.unit == unit and scale.words else None
    found = usable.lookup(typed) if usable is not None else None
    if found is not None:
        return _from_word(typed, found, unit)
    try:
        return WordedNumber(parse_number(text, unit, label), None)
    except LikelihoodInputError as error:
        if usable is None or error.rule != "not_a_number" or not may_be_word(typed):
            raise
        raise input_error(
            "unknown_word",
            f"'{typed}' is not on the team's word scale; adopted words: {usable.listing()}. "
            "Type one of them or a number.",
            label=label,
        ) from error


def word_basis(word: AdoptedWord) -> str:
    """The words recorded in a step's basis: "team word scale: 'unlikely' = 1.0e-2"."""
    return f"team word scale: '{word.word}' = {format_number(word.value)}"
