"""A team word scale: each word's spread, the adopted numbers, and reading a word in a field."""

import pytest
from scipy import stats

from app.likelihood.estimates import EstimateUnit
from app.likelihood.numbers import ParsedNumber, parse_frequency, parse_probability
from app.likelihood.types import LikelihoodInputError
from app.likelihood.word_scale import (
    AdoptedWord,
    WordedNumber,
    adopt_word_scale,
    may_be_word,
    normalise_word,
    parse_with_word_scale,
    word_basis,
    word_spreads,
)

PROBABILITY = EstimateUnit.PROBABILITY
PER_YEAR = EstimateUnit.PER_YEAR
ADOPTED = [("Rare", 1e-4), ("very  unlikely", 1e-3), ("unlikely", 1e-2)]
SCALE = adopt_word_scale(ADOPTED, PROBABILITY)


def test_each_word_gets_the_figures_of_its_own_estimates():
    said = {"rare": [1e-5, 1e-4, 1e-3], "unlikely": [1e-2, 5e-2]}
    spreads = word_spreads(said, PROBABILITY)
    assert [spread.word for spread in spreads] == ["rare", "unlikely"]
    assert spreads[0].stats.geometric_mean == pytest.approx(stats.gmean(said["rare"]))  # scipy
    # By hand: log10(1e-3 / 1e-5) = 2 orders, above one: discuss.
    assert (spreads[0].stats.spread_orders, spreads[0].stats.discuss) == (2.0, True)
    assert spreads[1].stats.discuss is False


def test_a_bad_number_for_a_word_names_the_word():
    with pytest.raises(LikelihoodInputError) as raised:
        word_spreads({"rare": [1e-4, 2.0]}, PROBABILITY)
    assert raised.value.message == (
        "Word scale: 'rare': Estimate 2: a probability must be greater than 0 and at most 1 "
        "(got 2)."
    )


def test_adopted_words_are_kept_in_order_with_inner_spaces_collapsed():
    assert SCALE.words == (
        AdoptedWord("Rare", 1e-4), AdoptedWord("very unlikely", 1e-3), AdoptedWord("unlikely", 1e-2)
    )  # fmt: skip
    assert normalise_word("  Very\tUNLIKELY ") == "very unlikely"


@pytest.mark.parametrize("typed", ["rare", "RARE", "  Rare  ", "rArE"])
def test_an_adopted_word_gives_its_number_whatever_the_case_and_spacing(typed):
    read = parse_with_word_scale(typed, PROBABILITY, SCALE, "Ignition")
    assert read == WordedNumber(
        ParsedNumber(1e-4, typed.strip(), "'Rare' on the team's word scale = 1 in 10,000 · 1.0e-4"),
        AdoptedWord("Rare", 1e-4),
    )


def test_a_two_word_entry_matches_with_any_inner_spacing():
    read = parse_with_word_scale("Very   Unlikely", PROBABILITY, SCALE)
    assert (read.number.value, read.word) == (1e-3, AdoptedWord("very unlikely", 1e-3))


@pytest.mark.parametrize("typed", ["1 in 1000", "0.5%", "1e-3", "one in ten"])
def test_numbers_still_go_to_the_number_parser(typed):
    assert parse_with_word_scale(typed, PROBABILITY, SCALE, "Ignition") == WordedNumber(
        parse_probability(typed, "Ignition"), None
    )


def test_frequency_fields_use_the_frequency_parser_and_a_frequency_scale():
    scale = adopt_word_scale([("seldom", 0.01)], PER_YEAR)
    assert parse_with_word_scale("once in 20 years", PER_YEAR, scale).number == (
        parse_frequency("once in 20 years")
    )
    read = parse_with_word_scale("Seldom", PER_YEAR, scale)
    assert read.number.plain == (
        "'seldom' on the team's word scale = once in 100 years · 1.0e-2 per year"
    )


def test_an_unknown_word_is_refused_with_the_adopted_words():
    with pytest.raises(LikelihoodInputError) as raised:
        parse_with_word_scale("likely", PROBABILITY, SCALE, "Ignition")
    assert raised.value.rule == "unknown_word"
    assert raised.value.message == (
        "Ignition: 'likely' is not on the team's word scale; adopted words: Rare (1.0e-4), "
        "very unlikely (1.0e-3), unlikely (1.0e-2). Type one of them or a number."
    )


@pytest.mark.parametrize(
    ("typed", "rule"), [("1.5", "probability_range"), ("1 in x", "not_a_number"), ("", "required")]
)
def test_bad_numbers_keep_the_number_parser_s_rule(typed, rule):
    with pytest.raises(LikelihoodInputError) as raised:
        parse_with_word_scale(typed, PROBABILITY, SCALE, "Ignition")
    assert raised.value.rule == rule


def test_without_a_scale_or_with_a_scale_for_the_other_unit_a_word_is_just_not_a_number():
    frequency_scale = adopt_word_scale([("rare", 1e-4)], PER_YEAR)
    for scale in (None, frequency_scale, adopt_word_scale([], PROBABILITY)):
        with pytest.raises(LikelihoodInputError) as raised:
            parse_with_word_scale("rare", PROBABILITY, scale, "Ignition")
        assert raised.value.rule == "not_a_number"


@pytest.mark.parametrize(
    ("adopted", "rule", "message"),
    [
        ([("rare", 1e-4), ("RARE ", 1e-3)], "word_unique",
         "Word scale: 'RARE ' is adopted twice (case and spaces ignored)."),
        ([("  ", 1e-4)], "word_required", "Word scale: an adopted word must not be empty."),
        ([("one", 1e-4)], "word_not_a_number",
         "Word scale: 'one' reads as a number, so it cannot stand for another one."),
        ([("ten", 1e-4)], "word_not_a_number",  # a number, even if out of range
         "Word scale: 'ten' reads as a number, so it cannot stand for another one."),
        ([("level 2", 1e-4)], "word_not_a_number",
         "Word scale: 'level 2' reads as a number, so it cannot stand for another one."),
        ([("rare", 0.0)], "probability_range",
         "Word 'rare': a probability must be greater than 0 and at most 1 (got 0)."),
    ],
)  # fmt: skip
def test_a_scale_that_breaks_a_rule_is_refused(adopted, rule, message):
    with pytest.raises(LikelihoodInputError) as raised:
        adopt_word_scale(adopted, PROBABILITY)
    assert (raised.value.rule, raised.value.message) == (rule, message)


def test_the_basis_records_the_word_and_its_number():
    assert word_basis(AdoptedWord("unlikely", 1e-2)) == "team word scale: 'unlikely' = 1.0e-2"


@pytest.mark.parametrize(("text", "could_be"), [("unlikely", True), ("very rare", True),
                                                ("1 in 10", False), ("once in 5 years", False),
                                                ("1e-3", False), ("", True)])
def test_text_with_a_digit_can_never_be_an_adopted_word(text: str, could_be: bool) -> None:
    """The rule that lets a typed number skip reading the team's scale: no adopted word
    holds a digit (word_not_a_number)."""
    assert may_be_word(text) is could_be
