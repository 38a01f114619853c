"""Scenario uncertainty: lognormal arithmetic against scipy.stats.lognorm and a seeded Monte Carlo.

A value is the median of a lognormal with error factor EF = p95 / p50 (NUREG/CR-6823, 2003;
definition secondary). scipy's lognorm(s=sigma, scale=median) is the same distribution.
"""

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import stats

from app.likelihood.types import LikelihoodInputError, StepInput, StepKind
from app.likelihood.uncertainty import (
    NO_ERROR_FACTOR,
    Z95,
    ErrorFactor,
    ErrorFactorSource,
    UncertainStep,
    scenario_distribution,
    sigma_from_error_factor,
)

IE, EC, CM, IPL = (
    StepKind.INITIATING_EVENT,
    StepKind.ENABLING_CONDITION,
    StepKind.CONDITIONAL_MODIFIER,
    StepKind.IPL,
)
Z95_SCIPY = stats.norm.ppf(0.95)  # scipy: the standard normal 95th percentile


def typed(value: float) -> ErrorFactor:
    return ErrorFactor(value, ErrorFactorSource.TYPED)


def step(kind: StepKind, value: float, ef: float | None, credited: bool = True) -> UncertainStep:
    factor = NO_ERROR_FACTOR if ef is None else typed(ef)
    return UncertainStep(StepInput(kind, value, f"{kind} {value}", credited), factor)


def sigma_by_hand(*factors: float) -> float:
    """sigma of a product: sqrt(sum (ln EF_i / z95)^2), z95 from scipy."""
    return math.sqrt(sum((math.log(ef) / Z95_SCIPY) ** 2 for ef in factors))


# 0.1/yr (EF 3) x 0.1 (EF 3) x 0.01 (EF 10): REFERENCE section 6 (computed): median 1e-4, EF 16.08.
REFERENCE_SCENARIO = [step(IE, 0.1, 3), step(CM, 0.1, 3), step(IPL, 0.01, 10)]
# name: (steps, median by hand, error factors of the counted steps)
SCENARIOS = {
    "reference": (REFERENCE_SCENARIO, 1e-4, (3, 3, 10)),
    "gap closed": (
        [step(IE, 0.1, 3), step(CM, 0.1, None), step(CM, 0.5, 2), step(CM, 0.5, None),
         step(IPL, 0.01, 10), step(IPL, 0.1, 3)],
        2.5e-6, (3, 2, 10, 3),
    ),
    "uncredited layer": (
        [step(IE, 1.0, 10), step(EC, 0.25, 1.5), step(IPL, 0.1, 5, credited=False),
         step(IPL, 1e-3, 10)],
        2.5e-4, (10, 1.5, 10),
    ),
}  # fmt: skip


def test_z95_is_scipy_s_standard_normal_95th_percentile():
    assert pytest.approx(Z95_SCIPY, rel=1e-15) == Z95


@pytest.mark.parametrize("ef", [1.0, 1.5, 3.0, 10.0, 100.0])
def test_an_error_factor_is_p95_over_p50_of_scipy_s_lognormal(ef):
    sigma = sigma_from_error_factor(ef)
    distribution = stats.lognorm(s=sigma, scale=1e-3) if sigma > 0 else None
    if distribution is None:
        assert sigma == 0.0
    else:
        assert distribution.ppf(0.95) / 1e-3 == pytest.approx(ef, rel=1e-12)
        assert 1e-3 / distribution.ppf(0.05) == pytest.approx(ef, rel=1e-12)


def test_reference_product_median_1e_4_with_error_factor_16_08():
    result = scenario_distribution(REFERENCE_SCENARIO, 1e-4)
    assert result.median == pytest.approx(1e-4, rel=1e-15)
    assert result.error_factor == pytest.approx(16.08, abs=0.005)  # REFERENCE section 6


@pytest.mark.parametrize("name", SCENARIOS)
@pytest.mark.parametrize("target_scale", [0.01, 0.3, 1.0, 4.0, 100.0])
def test_percentiles_mean_and_chance_of_meeting_match_scipy_lognorm(name, target_scale):
    steps, median, factors = SCENARIOS[name]
    result = scenario_distribution(steps, median * target_scale)
    reference = stats.lognorm(s=sigma_by_hand(*factors), scale=median)  # scipy
    assert result.median == pytest.approx(median, rel=1e-15)
    assert result.sigma == pytest.approx(sigma_by_hand(*factors), rel=1e-12)
    assert result.p05 == pytest.approx(reference.ppf(0.05), rel=1e-9)
    assert result.p95 == pytest.approx(reference.ppf(0.95), rel=1e-9)
    assert result.mean == pytest.approx(reference.mean(), rel=1e-9)
    expected = reference.cdf(median * target_scale)
    assert result.probability_meets_target == pytest.approx(expected, rel=1e-9, abs=1e-15)


@pytest.mark.parametrize(("median", "target"), [(1e-8, 1e-4), (1.0, 1e-9), (1e-3, 1e-7)])
def test_the_chance_of_meeting_is_accurate_far_into_both_tails(median, target):
    result = scenario_distribution([step(IE, median, 3)], target)
    expected = stats.lognorm(s=sigma_by_hand(3), scale=median).cdf(target)  # scipy
    if expected > 0.5:  # compare the small complement, where precision shows
        complement = stats.lognorm(s=sigma_by_hand(3), scale=median).sf(target)
        assert 1 - result.probability_meets_target == pytest.approx(complement, abs=1e-15)
    else:
        assert result.probability_meets_target == pytest.approx(expected, rel=1e-9)


MONTE_CARLO_SAMPLES = 2_000_000


@pytest.mark.parametrize("name", SCENARIOS)
def test_the_lognormal_product_matches_a_seeded_monte_carlo_of_each_step(name):
    """Each counted step sampled on its own and multiplied: numpy, 2e6 draws, seed 13.

    Tolerances (about 4 standard errors at 2e6 draws): percentiles 1 % relative, mean 2 %
    relative (sigma up to 1.9 gives a heavy tail), chance of meeting 0.002 absolute.
    """
    steps, median, _ = SCENARIOS[name]
    target = median * 2
    rng = np.random.default_rng(13)
    product = np.ones(MONTE_CARLO_SAMPLES)
    for item in steps:
        if item.step.credited or item.step.kind != IPL:
            sigma = 0.0 if item.error_factor.value is None else math.log(item.error_factor.value)
            product *= rng.lognormal(math.log(item.step.value), sigma / Z95_SCIPY, product.size)
    result = scenario_distribution(steps, target)
    assert result.p05 == pytest.approx(np.quantile(product, 0.05), rel=0.01)
    assert result.p95 == pytest.approx(np.quantile(product, 0.95), rel=0.01)
    assert result.median == pytest.approx(np.median(product), rel=0.01)
    assert result.mean == pytest.approx(product.mean(), rel=0.02)
    assert result.probability_meets_target == pytest.approx(np.mean(product <= target), abs=0.002)


def test_a_step_without_an_error_factor_adds_no_variance():
    with_point = scenario_distribution([step(IE, 0.1, 3), step(CM, 0.5, None)], 1e-2)
    alone = scenario_distribution([step(IE, 0.1, 3)], 1e-2)
    assert with_point.sigma == alone.sigma
    assert with_point.median == pytest.approx(0.05, rel=1e-15)
    assert [part.variance_share for part in with_point.steps] == [1.0, 0.0]


def test_variance_shares_split_the_log_variance_by_hand():
    result = scenario_distribution(REFERENCE_SCENARIO, 1e-4)
    # By hand: shares are ln(EF_i)^2 / sum ln(EF_j)^2 = (ln3^2, ln3^2, ln10^2) / total.
    total = 2 * math.log(3) ** 2 + math.log(10) ** 2
    expected = [math.log(3) ** 2 / total, math.log(3) ** 2 / total, math.log(10) ** 2 / total]
    assert [part.variance_share for part in result.steps] == pytest.approx(expected, rel=1e-12)


def test_an_uncredited_layer_counts_in_neither_median_nor_spread():
    steps = [step(IE, 0.1, 3), step(IPL, 0.1, 10, credited=False)]
    result = scenario_distribution(steps, 1e-2)
    assert (result.median, [part.kind for part in result.steps]) == (0.1, [IE])
    assert result.sigma == pytest.approx(sigma_by_hand(3), rel=1e-12)


@pytest.mark.parametrize(("target", "chance"), [(2.5e-6, 1.0), (2.4e-6, 0.0), (1e-5, 1.0)])
def test_without_any_error_factor_the_exact_verdict_decides(target, chance):
    # REFERENCE section 8 (exact): 0.1 x 0.1 x 0.5 x 0.5 x 0.01 x 0.1 = 2.5e-6 per year.
    steps = [step(IE, 0.1, None), step(CM, 0.1, None), step(CM, 0.5, None),
             step(CM, 0.5, None), step(IPL, 0.01, None), step(IPL, 0.1, None)]  # fmt: skip
    result = scenario_distribution(steps, target)
    assert result.probability_meets_target == chance
    assert result.p05 == result.p95 == result.mean == pytest.approx(2.5e-6, rel=1e-12)


def test_an_absurd_error_factor_gives_infinite_upper_figures_not_a_crash():
    result = scenario_distribution([step(IE, 0.1, 1e300), step(IPL, 0.1, 1e300)], 1e-4)
    assert (result.mean, result.p95, result.p05) == (math.inf, math.inf, 0.0)
    assert 0.0 < result.probability_meets_target < 1.0


def test_bad_scenarios_keep_the_scenario_rules():
    with pytest.raises(LikelihoodInputError) as raised:
        scenario_distribution([step(CM, 0.1, 3)], 1e-4)
    assert raised.value.rule == "one_initiating_event"


medians = st.floats(min_value=1e-9, max_value=1.0)
factors = st.one_of(st.none(), st.floats(min_value=1.0, max_value=1000.0))


@given(st.lists(st.tuples(medians, factors), min_size=1, max_size=6), medians)
def test_percentiles_bracket_the_median_and_the_mean_is_above_it(parts, target):
    steps = [step(IE if i == 0 else IPL, value, ef) for i, (value, ef) in enumerate(parts)]
    result = scenario_distribution(steps, target)
    assert result.p05 <= result.median * (1 + 1e-12)
    assert result.median <= result.mean * (1 + 1e-12) and result.median <= result.p95 * (1 + 1e-12)
    assert 0.0 <= result.probability_meets_target <= 1.0
