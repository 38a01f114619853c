"""Numbers as people say them: every accepted form, every rejected form and the rule it breaks."""

import pytest
from hypothesis import given
from hypothesis import strategies as st

from app.likelihood.numbers import (
    ParsedNumber,
    format_number,
    format_one_in,
    parse_frequency,
    parse_probability,
)
from app.likelihood.types import LikelihoodInputError

PROBABILITY_FORMS = "write 0.01, 1e-2, 1/100, 1 in 100 or 1%"


@pytest.mark.parametrize(
    ("text", "value", "plain"),
    [
        ("0.01", 0.01, "1 in 100 · 1.0e-2"),
        ("1e-2", 0.01, "1 in 100 · 1.0e-2"),
        ("1E-02", 0.01, "1 in 100 · 1.0e-2"),
        ("1/100", 0.01, "1 in 100 · 1.0e-2"),
        ("1 / 100", 0.01, "1 in 100 · 1.0e-2"),
        ("1 in 100", 0.01, "1 in 100 · 1.0e-2"),
        ("1 In 1,000", 0.001, "1 in 1,000 · 1.0e-3"),
        ("1 out of 20", 0.05, "1 in 20 · 5.0e-2"),
        ("1%", 0.01, "1 in 100 · 1.0e-2"),
        ("10 %", 0.1, "1 in 10 · 1.0e-1"),
        ("2.5 percent", 0.025, "1 in 40 · 2.5e-2"),
        (".5", 0.5, "1 in 2 · 5.0e-1"),
        ("  0.3 ", 0.3, "1 in 3.3 · 3.0e-1"),
        ("1x10^-3", 0.001, "1 in 1,000 · 1.0e-3"),
        ("1 \u00d7 10^\u22123", 0.001, "1 in 1,000 · 1.0e-3"),  # pasted times and minus signs
        ("10^-4", 1e-4, "1 in 10,000 · 1.0e-4"),
        ("1", 1.0, "1 in 1 · 1.0e0"),
        ("one in ten", 0.1, "1 in 10 · 1.0e-1"),
    ],
)
def test_accepted_probability_forms(text, value, plain):
    parsed = parse_probability(text, "Ignition")
    assert parsed == ParsedNumber(pytest.approx(value, rel=1e-15, abs=0), text.strip(), plain)


@pytest.mark.parametrize(
    ("text", "rule", "message"),
    [
        ("", "required", f"Ignition: a value is required: {PROBABILITY_FORMS}."),
        ("   ", "required", f"Ignition: a value is required: {PROBABILITY_FORMS}."),
        ("abc", "not_a_number", f"Ignition: not a number: {PROBABILITY_FORMS} (got 'abc')."),
        ("0,01", "decimal_comma",
         "Ignition: use a dot for decimals: write 0.001, not 0,001 (got '0,01')."),
        ("1e", "not_a_number", f"Ignition: not a number: {PROBABILITY_FORMS} (got '1e')."),
        ("nan", "not_a_number", f"Ignition: not a number: {PROBABILITY_FORMS} (got 'nan')."),
        ("inf", "not_a_number", f"Ignition: not a number: {PROBABILITY_FORMS} (got 'inf')."),
        ("1 in", "not_a_number", f"Ignition: not a number: {PROBABILITY_FORMS} (got '1 in')."),
        ("0.1 per year", "not_a_number",
         f"Ignition: not a number: {PROBABILITY_FORMS} (got '0.1 per year')."),
        ("1.5", "probability_range",
         "Ignition: a probability must be greater than 0 and at most 1 (got 1.5)."),
        ("150%", "probability_range",
         "Ignition: a probability must be greater than 0 and at most 1 (got 1.5)."),
        ("2 in 1", "probability_range",
         "Ignition: a probability must be greater than 0 and at most 1 (got 2)."),
        ("0", "probability_range",
         "Ignition: a probability must be greater than 0 and at most 1 (got 0)."),
        ("-0.1", "probability_range",
         "Ignition: a probability must be greater than 0 and at most 1 (got -0.1)."),
        ("1e-400", "probability_range",
         "Ignition: a probability must be greater than 0 and at most 1 (got 0)."),
        ("1e-300", "probability_range",
         "Ignition: a probability or PFD must be at least 1e-09; a smaller one is beyond what "
         "LOPA can mean (got 1e-300)."),
        ("1e-10", "probability_range",
         "Ignition: a probability or PFD must be at least 1e-09; a smaller one is beyond what "
         "LOPA can mean (got 1e-10)."),
        ("1 in 0", "zero_divisor", "Ignition: the number after 'in' or '/' must not be 0."),
    ],
)
def test_rejected_probability_forms(text, rule, message):
    with pytest.raises(LikelihoodInputError) as raised:
        parse_probability(text, "Ignition")
    assert (raised.value.rule, raised.value.step, raised.value.message) == (
        rule,
        "Ignition",
        message,
    )


def test_without_a_label_the_message_starts_with_the_rule():
    with pytest.raises(LikelihoodInputError) as raised:
        parse_probability("lots")
    assert str(raised.value) == f"Not a number: {PROBABILITY_FORMS} (got 'lots')."


@pytest.mark.parametrize(
    ("text", "per_year", "plain", "how"),
    [
        ("0.1", 0.1, "once in 10 years · 1.0e-1 per year", "a bare number is per year"),
        ("1e-2", 0.01, "once in 100 years · 1.0e-2 per year", "per year"),
        ("3e-5", 3e-5, "once in 33,000 years · 3.0e-5 per year", "per year"),
        ("2", 2.0, "2 per year · 2.0e0 per year", "per year"),
        ("1/100", 0.01, "once in 100 years · 1.0e-2 per year", "1 event in 100 years"),
        ("1 in 100", 0.01, "once in 100 years · 1.0e-2 per year", "1 event in 100 years"),
        ("3 in 30 years", 0.1, "3 in 30 years · 1.0e-1 per year", "3 / 30"),
        ("once in 50 years", 0.02, "once in 50 years · 2.0e-2 per year", "1 / 50"),
        ("twice in 10 years", 0.2, "2 in 10 years · 2.0e-1 per year", "2 / 10"),
        ("once every 5 years", 0.2, "once in 5 years · 2.0e-1 per year", "1 / 5"),
        ("1 in 100 yr", 0.01, "once in 100 years · 1.0e-2 per year", "1 / 100"),
        ("once in 6 months", 2.0, "once in 6 months · 2.0e0 per year", "12 / 6"),
        ("0.1/yr", 0.1, "0.1 per year · 1.0e-1 per year", "per year"),
        ("0.1 /y", 0.1, "0.1 per year · 1.0e-1 per year", "per year"),
        ("0.1 per year", 0.1, "0.1 per year · 1.0e-1 per year", "per year"),
        ("2/year", 2.0, "2 per year · 2.0e0 per year", "per year"),
        ("2 times a year", 2.0, "2 per year · 2.0e0 per year", "per year"),
        ("1e-5 per hour", 0.0876, "1.0e-5 per hour · 8.8e-2 per year", "x 8760 h a year"),
        ("1e-5/h", 0.0876, "1.0e-5 per hour · 8.8e-2 per year", "x 8760 h a year"),
        ("once a month", 12.0, "once a month · 1.2e1 per year", "x 12"),
        ("2 per month", 24.0, "2 per month · 2.4e1 per year", "x 12"),
        ("1 per week", 8760 / 168, "once a week · 5.2e1 per year", "x 8760 h / 168 h"),
        ("once a day", 365.0, "once a day · 3.6e2 per year", "x 365"),
    ],
)
def test_accepted_frequency_forms(text, per_year, plain, how):
    parsed = parse_frequency(text, "Pump seal fails")
    assert parsed.value == pytest.approx(per_year, rel=1e-15, abs=0), how
    assert (parsed.text, parsed.plain) == (text, plain)


@pytest.mark.parametrize(
    ("text", "rule"),
    [
        ("", "required"),
        ("often", "not_a_number"),
        ("10%", "not_a_number"),  # a percentage is a probability, not a rate
        ("per year", "not_a_number"),
        ("3 in 30 fortnights", "not_a_number"),
        ("0", "frequency_positive"),
        ("0 per year", "frequency_positive"),
        ("-1 per year", "frequency_positive"),
        ("1e400", "frequency_positive"),
        ("1e-300", "frequency_range"),  # issue 9: bounded to 1e-9..1e4 a year
        ("1e-10 per year", "frequency_range"),
        ("2 per hour", "frequency_range"),  # 17,520 a year, above 1e4
        ("1 in 0 years", "zero_divisor"),
        ("1/0", "zero_divisor"),
    ],
)
def test_rejected_frequency_forms(text, rule):
    with pytest.raises(LikelihoodInputError) as raised:
        parse_frequency(text, "Pump seal fails")
    assert (raised.value.rule, raised.value.step) == (rule, "Pump seal fails")
    assert raised.value.message.startswith("Pump seal fails: ")


def test_an_unreadable_frequency_lists_the_forms_that_work():
    with pytest.raises(LikelihoodInputError) as raised:
        parse_frequency("often")
    assert str(raised.value) == (
        "Not a number: write 0.1 (per year), 1e-2, 1/100, 3 in 30 years, once in 50 years, "
        "0.1/yr, 2 per year, once a month or 1e-5 per hour (got 'often')."
    )


@pytest.mark.parametrize(
    ("x", "text"),
    [
        (0.01, "1.0e-2"),
        (0.0099, "9.9e-3"),
        (0.00996, "1.0e-2"),
        (2.5e-6, "2.5e-6"),
        (1.0, "1.0e0"),
        (1234.0, "1.2e3"),
        (0.0, "0"),
        (float("inf"), "inf"),
    ],
)
def test_format_number_gives_two_significant_figures(x, text):
    assert format_number(x) == text


@pytest.mark.parametrize(
    ("p", "text"),
    [
        (1.0, "1 in 1"),
        (0.5, "1 in 2"),
        (0.3, "1 in 3.3"),
        (0.01, "1 in 100"),
        (0.003, "1 in 330"),
        (0.001, "1 in 1,000"),
        (7e-5, "1 in 14,000"),
        (1e-6, "1 in 1,000,000"),
    ],
)
def test_format_one_in_rounds_to_two_significant_figures(p, text):
    assert format_one_in(p) == text


def test_format_one_in_refuses_a_value_that_is_not_a_probability():
    with pytest.raises(LikelihoodInputError) as raised:
        format_one_in(2.0)
    assert raised.value.rule == "probability_range"


@given(st.floats(min_value=1e-9, max_value=1.0))
def test_a_probability_written_as_its_repr_reads_back_exactly(p):
    assert parse_probability(repr(p)).value == p


@given(st.floats(min_value=1e-6, max_value=1.0))
def test_one_in_n_reads_back_to_two_significant_figures(p):
    back = parse_probability(format_one_in(p)).value
    assert back == pytest.approx(p, rel=0.06, abs=0)  # 1/N with N to two figures: within 1/19


@given(st.floats(min_value=1e-9, max_value=1e3))
def test_a_frequency_written_as_its_repr_reads_back_exactly(rate):
    assert parse_frequency(repr(rate)).value == rate


@pytest.mark.parametrize(
    "text", ["0,001", "0,010", "0,1", "1,5", "00,001", "1,5e-3", "2,5 per year", "1 in 1,0"]
)
@pytest.mark.parametrize("parse", [parse_probability, parse_frequency], ids=["p", "f"])
def test_a_decimal_comma_is_refused_not_read_as_thousands(text, parse):
    # Issue 9, item 6: "0,001" was read as 1 and "0,010" as 10. Refused, naming the rule.
    with pytest.raises(LikelihoodInputError) as raised:
        parse(text, "Ignition")
    assert raised.value.rule == "decimal_comma"
    assert "use a dot for decimals" in raised.value.message


@pytest.mark.parametrize(
    ("text", "value"), [("1,000", 1000.0), ("1 in 10,000", 1e-4), ("1 in 1,000,000", 1e-6)]
)
def test_thousands_separators_still_read(text, value):
    parse = parse_frequency if value > 1 else parse_probability
    assert parse(text).value == value
