"""An incomplete scenario: what it still needs, and how pages and sums word it.

The rule (common practice, no source): a LOPA scenario has no frequency, target or SIL until
the team has given its initiating frequency and its severity; no stand-in value is used.
"""

from app.likelihood.completeness import (
    INITIATING_FREQUENCY,
    SEVERITY,
    incomplete_words,
    left_out_words,
    missing_inputs,
)


def test_a_new_scenario_lacks_both_inputs_in_the_order_a_team_gives_them() -> None:
    assert missing_inputs(initiating_frequency_given=False, severity_given=False) == (
        INITIATING_FREQUENCY, SEVERITY)


def test_each_input_given_on_its_own_leaves_the_other_missing() -> None:
    assert missing_inputs(initiating_frequency_given=True, severity_given=False) == (SEVERITY,)
    assert missing_inputs(initiating_frequency_given=False, severity_given=True) == (
        INITIATING_FREQUENCY,)


def test_both_given_is_complete() -> None:
    assert missing_inputs(initiating_frequency_given=True, severity_given=True) == ()


def test_the_words_name_what_is_missing() -> None:
    assert incomplete_words((INITIATING_FREQUENCY, SEVERITY)) == (
        "no initiating event frequency and no severity yet")
    assert incomplete_words((SEVERITY,)) == "no severity yet"


def test_sums_say_how_many_scenarios_they_leave_out_and_nothing_when_none() -> None:
    assert left_out_words(0) == ""
    assert left_out_words(1).startswith("1 incomplete scenario left out ")
    assert left_out_words(3).startswith("3 incomplete scenarios left out ")
