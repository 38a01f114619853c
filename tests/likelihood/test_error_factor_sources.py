"""Where a step's error factor comes from: typed > last round > typical range > study default.

The round and range rules are common practice, no source (REFERENCE section 6): a round gives
EF = exp(1.645 s), s the sample standard deviation of ln(estimates); a published range read as
5th to 95th percentile gives EF = sqrt(high / low).
"""

import math

import numpy as np
import pytest
from scipy import stats

from app.likelihood.types import LikelihoodInputError, StepKind
from app.likelihood.typical import typical_by_key
from app.likelihood.uncertainty import (
    NO_ERROR_FACTOR,
    ErrorFactor,
    ErrorFactorSource,
    choose_error_factor,
    error_factor_from_estimates,
    error_factor_from_range,
)

IE, IPL, CM = StepKind.INITIATING_EVENT, StepKind.IPL, StepKind.CONDITIONAL_MODIFIER
ROUND = (1e-3, 3e-3, 1e-2, 2e-3)
DEFAULTS = {IE: 3.0, IPL: 10.0}


def test_a_round_s_error_factor_is_exp_z95_times_the_sample_sd_of_the_logs():
    # numpy sample standard deviation (ddof=1) and scipy's normal 95th percentile.
    expected = math.exp(stats.norm.ppf(0.95) * np.std(np.log(ROUND), ddof=1))
    assert error_factor_from_estimates(ROUND) == pytest.approx(expected, rel=1e-12)


def test_two_estimates_a_decade_apart_by_hand():
    # By hand: s = ln(10) / sqrt(2) = 1.628174; 1.644854 * 1.628174 = 2.678108;
    # EF = exp(2.678108) = e**2.7 * e**-0.021892 = 14.8797 * 0.978346 = 14.5575
    assert error_factor_from_estimates([1e-3, 1e-2]) == pytest.approx(14.5575, rel=1e-4)


@pytest.mark.parametrize("estimates", [[], [1e-3], [2e-3, 2e-3, 2e-3]])
def test_a_round_without_spread_gives_no_error_factor(estimates):
    assert error_factor_from_estimates(estimates) is None


def test_a_round_with_a_value_that_is_not_positive_is_refused():
    with pytest.raises(LikelihoodInputError) as raised:
        choose_error_factor(kind=IE, last_round=[1e-3, 0.0])
    assert (raised.value.rule, raised.value.message) == (
        "estimate_positive",
        "Estimate 2: an estimate must be a finite number above 0 (got 0).",
    )


def test_a_range_read_as_5th_to_95th_percentile_by_hand():
    # By hand: sqrt(1 / 1e-2) = 10; sqrt(1e-1 / 1e-5) = 100.
    assert error_factor_from_range(1e-2, 1.0) == pytest.approx(10.0, rel=1e-15)
    assert error_factor_from_range(1e-5, 1e-1) == pytest.approx(100.0, rel=1e-12)
    assert error_factor_from_range(0.01, 0.01) is None  # a single published value


@pytest.mark.parametrize(
    ("inputs", "expected"),
    [
        (dict(typed=2.0, last_round=ROUND, typical_range=(1e-2, 1.0)),
         ErrorFactor(2.0, ErrorFactorSource.TYPED)),
        (dict(last_round=ROUND, typical_range=(1e-2, 1.0)),
         ErrorFactor(pytest.approx(error_factor_from_estimates(ROUND)),
                     ErrorFactorSource.ESTIMATE_ROUND)),
        (dict(last_round=(1e-3, 1e-3), typical_range=(1e-2, 1.0)),
         ErrorFactor(pytest.approx(10.0), ErrorFactorSource.TYPICAL_RANGE)),
        (dict(typical_range=(0.07, 0.07)), ErrorFactor(3.0, ErrorFactorSource.STUDY_DEFAULT)),
        (dict(), ErrorFactor(3.0, ErrorFactorSource.STUDY_DEFAULT)),
    ],
)  # fmt: skip
def test_the_first_available_source_applies_and_is_named(inputs, expected):
    assert choose_error_factor(kind=IE, study_defaults=DEFAULTS, **inputs) == expected


def test_with_no_source_at_all_the_value_is_taken_as_exact():
    assert choose_error_factor(kind=CM, study_defaults=DEFAULTS) == NO_ERROR_FACTOR
    assert choose_error_factor(kind=CM) == ErrorFactor(None, ErrorFactorSource.NONE)


def test_a_typical_value_row_s_range_feeds_the_error_factor():
    # CCPS (2001) Table 5.1 (seen in a scan): BPCS loop failure 1e-2 to 1 per year -> EF 10.
    row = typical_by_key("bpcs_loop_failure")
    assert row is not None
    chosen = choose_error_factor(kind=IE, typical_range=(row.low, row.high))
    assert chosen == ErrorFactor(pytest.approx(10.0), ErrorFactorSource.TYPICAL_RANGE)


@pytest.mark.parametrize(("typed", "label"), [(0.5, "Error factor"), (math.inf, "Error factor")])
def test_a_typed_error_factor_below_one_or_not_finite_is_refused(typed, label):
    with pytest.raises(LikelihoodInputError) as raised:
        choose_error_factor(kind=IE, typed=typed)
    assert raised.value.rule == "error_factor_range"
    assert raised.value.message.startswith(f"{label}: an error factor (95th over 50th percentile)")


def test_a_bad_study_default_is_refused_naming_it():
    with pytest.raises(LikelihoodInputError) as raised:
        choose_error_factor(kind=IPL, study_defaults={IPL: 0.0})
    assert raised.value.message == (
        "Default error factor: an error factor (95th over 50th percentile) must be a finite "
        "number of at least 1 (got 0)."
    )
