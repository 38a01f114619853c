"""Counts, chances and rates: the Poisson relation checked against scipy.stats."""

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import stats

from app.likelihood.conversions import (
    events_per_year,
    fraction_of_year,
    frequency_from_probability,
    probability_of_at_least_one,
    task_error_frequency,
)
from app.likelihood.numbers import parse_frequency
from app.likelihood.types import LikelihoodInputError

NO_SOURCE = "common practice, no source"


RATES_AND_SPANS = [(0.1, 1.0), (1e-4, 1.0), (1e-4, 30.0), (0.5, 2.0), (2.0, 1.0), (3.0, 10.0)]


@pytest.mark.parametrize(("rate", "years"), RATES_AND_SPANS)
def test_chance_of_at_least_one_event_matches_one_minus_scipy_poisson_pmf0(rate, years):
    expected = 1 - stats.poisson.pmf(0, rate * years)
    assert probability_of_at_least_one(rate, years) == pytest.approx(expected, rel=1e-9, abs=0)


@pytest.mark.parametrize(("rate", "years"), [*RATES_AND_SPANS, (1e-9, 0.5), (1e-9, 1.0)])
def test_chance_of_at_least_one_event_matches_scipy_poisson_sf0(rate, years):
    # 1 - pmf(0) cancels for tiny lambda T (7e-8 off at 5e-10); sf(0) and expm1 do not.
    expected = stats.poisson.sf(0, rate * years)
    assert probability_of_at_least_one(rate, years) == pytest.approx(expected, rel=1e-12, abs=0)


def test_ten_percent_a_year_gives_a_0_0952_chance_in_a_year():
    # REFERENCE section 7 (computed): lambda 0.1 per year over 1 year -> 0.0952.
    assert probability_of_at_least_one(0.1) == pytest.approx(0.0952, abs=5e-5)
    assert probability_of_at_least_one(0.1) == pytest.approx(1 - math.exp(-0.1), rel=1e-15, abs=0)


def test_a_small_rate_keeps_full_precision():
    # 1 - exp(-x) would lose digits here; expm1 does not (x = 1e-9, the smallest frequency
    # allowed; answer x - x^2/2).
    assert probability_of_at_least_one(1e-9) == pytest.approx(1e-9 - 5e-19, rel=1e-15, abs=0)


@pytest.mark.parametrize(("probability", "years"), [(0.0952, 1.0), (0.5, 1.0), (0.01, 10.0)])
def test_rate_from_a_chance_matches_scipy_poisson(probability, years):
    rate = frequency_from_probability(probability, years)
    assert stats.poisson.sf(0, rate * years) == pytest.approx(probability, rel=1e-9, abs=0)


@given(st.floats(min_value=1e-6, max_value=2.0), st.floats(min_value=0.01, max_value=5.0))
def test_rate_and_chance_round_trip(rate, years):
    # lambda T stays at least 1e-8 (the chance must be an allowed probability, >= 1e-9) and at
    # most 10: beyond that 1 - P is so small that rounding P to a float
    # alone moves the recovered rate by more than 1e-9 (ill-conditioned, not a bug).
    chance = probability_of_at_least_one(rate, years)
    assert frequency_from_probability(chance, years) == pytest.approx(rate, rel=1e-9, abs=0)


def test_a_failure_seen_three_times_in_a_thirty_year_plant_life_is_0_1_a_year():
    assert events_per_year(3, 30) == 0.1, NO_SOURCE
    assert parse_frequency("3 in 30 years").value == 0.1, NO_SOURCE


def test_a_weekly_task_with_a_one_percent_error_chance_fails_0_52_times_a_year():
    # HSE/PSLG, Safety and environmental standards for fuel storage sites (2009), App. 2 (seen).
    assert task_error_frequency(52, 0.01) == pytest.approx(0.52, rel=1e-15, abs=0)


def test_time_at_risk_is_hours_over_8760():
    # CCPS (2013) ch. 2, concept seen; a year is 8760 h here.
    assert fraction_of_year(2190) == 0.25
    assert fraction_of_year(8760) == 1.0


@pytest.mark.parametrize(
    ("call", "rule", "step"),
    [
        (lambda: events_per_year(0, 30), "events_positive", "Events"),
        (lambda: events_per_year(3, 0), "years_positive", "Years"),
        (lambda: events_per_year(3, math.inf), "years_positive", "Years"),
        (lambda: probability_of_at_least_one(-0.1), "frequency_positive", "Frequency"),
        (lambda: probability_of_at_least_one(0.1, -1), "years_positive", "Years"),
        (lambda: frequency_from_probability(1.0), "probability_below_one", "Probability"),
        (lambda: frequency_from_probability(0.0), "probability_range", "Probability"),
        (lambda: fraction_of_year(9000), "hours_in_year", "Hours per year"),
        (lambda: task_error_frequency(52, 2), "probability_range", "Error probability per task"),
    ],
    ids=["no-events", "no-years", "inf-years", "neg-rate", "neg-years", "certain", "zero-p",
         "hours", "task-p"],
)
def test_conversions_reject_bad_input_naming_the_rule(call, rule, step):
    with pytest.raises(LikelihoodInputError) as raised:
        call()
    assert (raised.value.rule, raised.value.step) == (rule, step)
    assert raised.value.message.startswith(f"{step}: ")
