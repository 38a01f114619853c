"""A round of estimates: geometric mean and median against scipy/numpy, spread by hand, log axis."""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import stats

from app.likelihood.estimates import (
    EstimateUnit,
    LogAxis,
    log_axis_for,
    round_stats,
    unit_for_kind,
)
from app.likelihood.types import LikelihoodInputError, StepKind

PER_YEAR = EstimateUnit.PER_YEAR
PROBABILITY = EstimateUnit.PROBABILITY

ROUNDS = [
    [1e-3, 2e-3, 3e-3, 5e-3, 1e-2, 4e-3],
    [0.1, 0.01, 0.001],
    [0.3, 0.05],
    [1e-4],
    [2.0, 0.5, 0.1, 0.1, 1.0],
    [1e-6, 1e-2, 3e-5, 7e-4, 1e-3, 2e-1, 5e-5],
]


@pytest.mark.parametrize("estimates", ROUNDS)
def test_geometric_mean_matches_scipy_gmean(estimates):
    figures = round_stats(estimates, PER_YEAR)
    assert figures.geometric_mean == pytest.approx(stats.gmean(estimates), rel=1e-12)  # scipy


@pytest.mark.parametrize("estimates", ROUNDS)
def test_median_matches_numpy_median(estimates):
    figures = round_stats(estimates, PER_YEAR)
    assert figures.median == pytest.approx(float(np.median(estimates)), rel=1e-15)  # numpy


@pytest.mark.parametrize("estimates", ROUNDS)
def test_log_sd_matches_numpy_sample_std_of_logs(estimates):
    figures = round_stats(estimates, PER_YEAR)
    if len(estimates) == 1:
        assert figures.log_sd is None
    else:  # numpy, ddof=1: the sample standard deviation
        assert figures.log_sd == pytest.approx(float(np.std(np.log(estimates), ddof=1)), rel=1e-12)


def test_geometric_mean_of_0_1_0_01_0_001_is_0_01():
    # REFERENCE section 6 (computed): the geometric mean of 0.1, 0.01, 0.001 is 0.01.
    assert round_stats([0.1, 0.01, 0.001], PROBABILITY).geometric_mean == pytest.approx(0.01)


@pytest.mark.parametrize(
    ("estimates", "lowest", "highest", "orders"),
    [
        # By hand: log10(1e-2 / 1e-3) = log10(10) = 1.
        ([1e-3, 4e-3, 1e-2], 1e-3, 1e-2, 1.0),
        # By hand: log10(0.3 / 0.05) = log10(6) = 0.778151...
        ([0.3, 0.05], 0.05, 0.3, 0.7781512503836436),
        # By hand: log10(2e-1 / 1e-6) = log10(2e5) = 5 + log10(2) = 5.30103
        ([1e-6, 1e-2, 2e-1], 1e-6, 2e-1, 5.301029995663981),
        ([1e-4], 1e-4, 1e-4, 0.0),
    ],
)
def test_lowest_highest_and_spread_in_orders_of_magnitude(estimates, lowest, highest, orders):
    figures = round_stats(estimates, PER_YEAR)
    assert (figures.lowest, figures.highest) == (lowest, highest)
    assert figures.spread_orders == pytest.approx(orders, rel=1e-12, abs=1e-15)


@pytest.mark.parametrize(
    ("estimates", "discuss"),
    [
        ([1e-3, 1e-2], False),  # exactly one order: not above it
        ([1e-3, 1.1e-2], True),
        ([0.1, 0.3, 0.05], False),
        ([1e-4, 1e-3, 1e-1], True),
        ([1e-4], False),
    ],
)
def test_a_spread_above_one_order_of_magnitude_is_called_out(estimates, discuss):
    assert round_stats(estimates, PROBABILITY).discuss is discuss


def test_figures_keep_the_estimates_in_the_order_given():
    figures = round_stats([3e-3, 1e-3, 1e-2], PER_YEAR)
    assert figures.estimates == (3e-3, 1e-3, 1e-2)
    assert figures.count == 3
    assert figures.unit is PER_YEAR


@pytest.mark.parametrize(
    ("values", "unit", "axis"),
    [
        ([1e-3, 4e-3, 1e-2], PER_YEAR, LogAxis(-3, -2)),
        ([2e-3, 3e-1], PER_YEAR, LogAxis(-3, 0)),
        ([1e-3], PER_YEAR, LogAxis(-4, -2)),  # one decade either side of a single power of ten
        ([5e-3], PER_YEAR, LogAxis(-3, -2)),
        ([0.5, 1.0], PROBABILITY, LogAxis(-1, 0)),
        ([1.0], PROBABILITY, LogAxis(-2, 0)),  # a probability axis stops at 1
        ([2.0, 30.0], PER_YEAR, LogAxis(0, 2)),
    ],
)
def test_the_axis_covers_the_estimates_in_whole_decades(values, unit, axis):
    assert log_axis_for(values, unit) == axis


def test_positions_on_the_axis_are_log_scaled_by_hand():
    figures = round_stats([1e-3, 1e-2, 1e-1, 3e-2], PER_YEAR)
    assert figures.axis == LogAxis(-3, -1)
    # By hand: (log10(3e-2) - (-3)) / 2 = (-1.522879 + 3) / 2 = 0.738561
    assert figures.positions == pytest.approx([0.0, 0.5, 1.0, 0.7385606273598312], rel=1e-12)
    assert figures.axis.ticks() == pytest.approx([1e-3, 1e-2, 1e-1])


def test_a_value_off_the_axis_is_drawn_at_its_end():
    axis = LogAxis(-3, -1)
    assert (axis.position(1e-5), axis.position(1.0), axis.position(0.0)) == (0.0, 1.0, 0.0)


def test_an_axis_for_no_values_is_refused():
    with pytest.raises(LikelihoodInputError) as raised:
        log_axis_for([], PER_YEAR)
    assert raised.value.rule == "estimates_required"


@pytest.mark.parametrize(
    ("values", "unit", "rule", "message"),
    [
        ([], PER_YEAR, "estimates_required", "Estimates: a round needs at least one estimate."),
        ([1e-3, 0.0], PER_YEAR, "frequency_positive",
         "Estimate 2: a frequency must be a finite number of events per year above 0 (got 0)."),
        ([0.1, 1.5], PROBABILITY, "probability_range",
         "Estimate 2: a probability must be greater than 0 and at most 1 (got 1.5)."),
        ([math.nan], PROBABILITY, "probability_range",
         "Estimate 1: a probability must be greater than 0 and at most 1 (got nan)."),
    ],
)  # fmt: skip
def test_bad_estimates_are_refused_naming_the_rule(values, unit, rule, message):
    with pytest.raises(LikelihoodInputError) as raised:
        round_stats(values, unit)
    assert (raised.value.rule, raised.value.message) == (rule, message)


def test_the_initiating_event_is_estimated_per_year_everything_else_as_a_probability():
    assert unit_for_kind(StepKind.INITIATING_EVENT) is PER_YEAR
    others = [StepKind.ENABLING_CONDITION, StepKind.CONDITIONAL_MODIFIER, StepKind.IPL]
    assert {unit_for_kind(kind) for kind in others} == {PROBABILITY}


positive = st.floats(min_value=1e-9, max_value=1.0, allow_nan=False, allow_infinity=False)


@given(st.lists(positive, min_size=1, max_size=12))
def test_pooled_figures_lie_within_the_estimates_and_positions_on_the_axis(values):
    figures = round_stats(values, PROBABILITY)
    assert figures.lowest <= figures.geometric_mean <= figures.highest
    assert figures.lowest <= figures.median <= figures.highest
    assert all(0.0 <= where <= 1.0 for where in figures.positions)
    assert figures.axis.low_decade < figures.axis.high_decade <= 0
    assert 10.0**figures.axis.low_decade <= figures.lowest
    assert figures.highest <= 10.0**figures.axis.high_decade
