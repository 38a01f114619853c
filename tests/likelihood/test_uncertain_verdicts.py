"""Uncertain verdicts (5 % < P(meets) < 95 %) and an action judged against the distribution."""

import math

import pytest
from scipy import stats

from app.likelihood.types import LikelihoodInputError, StepInput, StepKind
from app.likelihood.uncertainty import (
    ErrorFactor,
    ErrorFactorSource,
    ScenarioDistribution,
    UncertainStep,
    VerdictConfidence,
    classify_verdict,
    judge_action,
    scenario_distribution,
)

Z95 = stats.norm.ppf(0.95)  # scipy


def one_step(median: float, ef: float, target: float) -> ScenarioDistribution:
    factor = ErrorFactor(ef, ErrorFactorSource.TYPED)
    return scenario_distribution(
        [UncertainStep(StepInput(StepKind.INITIATING_EVENT, median, "Loop fails"), factor)], target
    )


@pytest.mark.parametrize(
    ("probability", "confidence"),
    [
        (0.0, VerdictConfidence.MISSES),
        (0.05, VerdictConfidence.MISSES),  # the edges count as sure
        (0.0500001, VerdictConfidence.UNCERTAIN),
        (0.5, VerdictConfidence.UNCERTAIN),
        (0.9499999, VerdictConfidence.UNCERTAIN),
        (0.95, VerdictConfidence.MEETS),
        (1.0, VerdictConfidence.MEETS),
    ],
)
def test_a_verdict_is_uncertain_strictly_between_5_and_95_percent(probability, confidence):
    assert classify_verdict(probability) is confidence


@pytest.mark.parametrize(
    ("target_over_median", "confidence"),
    [
        (1.0, VerdictConfidence.UNCERTAIN),  # the median on the target: 50 %
        (3.5, VerdictConfidence.MEETS),  # target above p95 = 3 x median
        (2.5, VerdictConfidence.UNCERTAIN),
        (1 / 3.5, VerdictConfidence.MISSES),  # target below p05 = median / 3
    ],
)
def test_a_scenario_s_confidence_follows_where_the_target_sits_in_its_band(
    target_over_median, confidence
):
    result = one_step(1e-3, 3.0, 1e-3 * target_over_median)
    assert result.confidence is confidence


def test_an_action_s_factor_moves_the_median_and_the_chance_is_read_from_scipy():
    before = one_step(1e-4, 10.0, 1e-4)
    judged = judge_action(before, 0.1)
    sigma = math.log(10.0) / Z95
    expected = stats.lognorm(s=sigma, scale=1e-5).cdf(1e-4)  # scipy
    assert judged.after.median == pytest.approx(1e-5, rel=1e-12)
    assert judged.after.sigma == pytest.approx(sigma, rel=1e-12)
    assert judged.after.probability_meets_target == pytest.approx(expected, rel=1e-9)
    # By hand: the target is ln(10) / sigma = 1.645 sigmas above the new median: 95 %.
    assert judged.after.probability_meets_target == pytest.approx(0.95, rel=1e-12)
    assert judged.probability_gain == pytest.approx(0.45, rel=1e-12)
    assert judged.after.confidence is VerdictConfidence.MEETS


def test_an_uncertain_action_adds_its_own_log_variance():
    before = one_step(1e-4, 10.0, 1e-4)
    judged = judge_action(before, 0.1, ErrorFactor(10.0, ErrorFactorSource.TYPED), "New trip")
    sigma = math.sqrt(2) * math.log(10.0) / Z95
    expected = stats.lognorm(s=sigma, scale=1e-5).cdf(1e-4)  # scipy
    assert judged.after.probability_meets_target == pytest.approx(expected, rel=1e-9)
    assert judged.after.confidence is VerdictConfidence.UNCERTAIN  # 87.8 %: not sure yet
    assert [part.label for part in judged.after.steps] == ["Loop fails", "New trip"]
    assert judged.before is before


def test_an_action_on_a_point_value_uses_the_exact_verdict():
    before = scenario_distribution([UncertainStep(StepInput(StepKind.INITIATING_EVENT, 0.1))], 1e-2)
    judged = judge_action(before, 0.1)
    assert (before.probability_meets_target, judged.after.probability_meets_target) == (0.0, 1.0)


@pytest.mark.parametrize("factor", [0.0, 1.5, math.nan])
def test_an_action_factor_must_be_a_probability(factor):
    with pytest.raises(LikelihoodInputError) as raised:
        judge_action(one_step(1e-4, 3.0, 1e-4), factor, label="New trip")
    assert raised.value.rule == "probability_range"
    assert raised.value.message.startswith("New trip factor: a probability must be")
