"""Lognormal uncertainty of a scenario: error factors, percentiles, mean, chance of meeting target.

Every step value is read as the median of a lognormal whose error factor is EF = p95 / p50 =
exp(1.645 sigma) (NUREG/CR-6823, 2003). A product of independent lognormals is lognormal: the
median is the product of the medians and the log-variances add. A step without an EF adds none.
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from enum import StrEnum

from app.likelihood.frequency import compute_scenario
from app.likelihood.types import StepInput, StepKind, input_error
from app.likelihood.validation import at_least, at_most, validate_probability

Z95 = statistics.NormalDist().inv_cdf(0.95)
"""The standard normal 95th percentile, 1.6448536269514722: ln(EF) = Z95 * sigma."""


class ErrorFactorSource(StrEnum):
    """Where a step's error factor came from, in the order they are tried."""

    TYPED = "typed"
    ESTIMATE_ROUND = "estimate_round"
    TYPICAL_RANGE = "typical_range"
    STUDY_DEFAULT = "study_default"
    NONE = "none"


ERROR_FACTOR_SOURCE_LABELS: dict[ErrorFactorSource, str] = {
    ErrorFactorSource.TYPED: "typed by the team",
    ErrorFactorSource.ESTIMATE_ROUND: "spread of the last estimate round",
    ErrorFactorSource.TYPICAL_RANGE: (
        "range of the typical-value row, read as 5th to 95th percentile"
    ),
    ErrorFactorSource.STUDY_DEFAULT: "the study's default for this kind of step",
    ErrorFactorSource.NONE: "none: the value is taken as exact",
}


@dataclass(frozen=True)
class ErrorFactor:
    """A step's error factor (None: no uncertainty recorded) and which source gave it."""

    value: float | None
    source: ErrorFactorSource


NO_ERROR_FACTOR = ErrorFactor(None, ErrorFactorSource.NONE)


def validate_error_factor(value: float, label: str = "Error factor") -> float:
    """Return value if it is a finite error factor of at least 1; else raise."""
    if not (math.isfinite(value) and value >= 1):
        raise input_error(
            "error_factor_range",
            f"an error factor (95th over 50th percentile) must be a finite number of at least 1 "
            f"(got {value:g}).",
            label=label,
        )
    return float(value)


MAX_TYPED_ERROR_FACTOR = 100.0
"""The largest EF a team may type: EF 100 spreads the 5th to 95th percentile over four orders
of magnitude, beyond what LOPA's order-of-magnitude numbers mean (common practice, no source)."""


def read_typed_error_factor(text: str, label: str = "Error factor") -> float | None:
    """A typed error factor: blank for none, else a number from 1 to 100 ("EF 3" reads as 3)."""
    cleaned = text.strip().removeprefix("EF").removeprefix("ef").strip()
    if not cleaned:
        return None
    try:
        value = float(cleaned)
    except ValueError:
        raise input_error(
            "error_factor_number",
            f"an error factor is a number from 1 to {MAX_TYPED_ERROR_FACTOR:g}, "
            f"such as 3 or 10 (got '{text.strip()[:40]}').",
            label=label,
        ) from None
    return validate_typed_error_factor(value, label)


def validate_typed_error_factor(value: float, label: str = "Error factor") -> float:
    """Return value if it is an error factor the team may type: 1 <= EF <= 100."""
    if not (math.isfinite(value) and 1 <= value <= MAX_TYPED_ERROR_FACTOR):
        raise input_error(
            "error_factor_bounds",
            f"an error factor (95th over 50th percentile) must be at least 1 and at most "
            f"{MAX_TYPED_ERROR_FACTOR:g} (got {value:g}); 1 means no uncertainty.",
            label=label,
        )
    return float(value)


def sigma_from_error_factor(error_factor: float) -> float:
    """The lognormal's log standard deviation: sigma = ln(EF) / 1.6448536..."""
    return math.log(validate_error_factor(error_factor)) / Z95


def error_factor_from_sigma(sigma: float) -> float:
    """EF = exp(1.6448536... x sigma)."""
    return math.exp(Z95 * sigma)


def error_factor_from_estimates(estimates: Sequence[float]) -> float | None:
    """EF = exp(1.645 s), s the sample standard deviation of ln(estimates) (common practice).

    None for fewer than two estimates or identical ones: no spread to read.
    """
    for number, value in enumerate(estimates, start=1):
        if not (math.isfinite(value) and value > 0):
            raise input_error(
                "estimate_positive",
                f"an estimate must be a finite number above 0 (got {value:g}).",
                label=f"Estimate {number}",
            )
    if len(estimates) < 2 or min(estimates) == max(estimates):
        return None
    return error_factor_from_sigma(statistics.stdev(math.log(value) for value in estimates))


def error_factor_from_range(low: float, high: float) -> float | None:
    """EF = sqrt(high / low), the range read as 5th to 95th percentile; None for one value."""
    if not (0 < low < high and math.isfinite(high)):
        return None
    return math.sqrt(high / low)


def choose_error_factor(
    *,
    kind: StepKind,
    typed: float | None = None,
    last_round: Sequence[float] = (),
    typical_range: tuple[float, float] | None = None,
    study_defaults: Mapping[StepKind, float] | None = None,
) -> ErrorFactor:
    """The first error factor available: typed > last round > typical range > study default."""
    if typed is not None:
        return ErrorFactor(validate_error_factor(typed), ErrorFactorSource.TYPED)
    from_round = error_factor_from_estimates(last_round)
    if from_round is not None:
        return ErrorFactor(from_round, ErrorFactorSource.ESTIMATE_ROUND)
    from_range = error_factor_from_range(*typical_range) if typical_range else None
    if from_range is not None:
        return ErrorFactor(from_range, ErrorFactorSource.TYPICAL_RANGE)
    default = (study_defaults or {}).get(kind)
    if default is not None:
        label = "Default error factor"
        return ErrorFactor(validate_error_factor(default, label), ErrorFactorSource.STUDY_DEFAULT)
    return NO_ERROR_FACTOR


@dataclass(frozen=True)
class UncertainStep:
    """A step whose value is the median of a lognormal with the given error factor."""

    step: StepInput
    error_factor: ErrorFactor = NO_ERROR_FACTOR

    @property
    def sigma(self) -> float:
        """Log standard deviation (0 when the step has no error factor)."""
        factor = self.error_factor.value
        return 0.0 if factor is None else sigma_from_error_factor(factor)


def _exp(x: float) -> float:
    return math.exp(x) if x < 709.0 else math.inf  # beyond exp's float range


def normal_cdf(z: float) -> float:
    """Standard normal cdf by erfc, accurate in both tails."""
    return 0.5 * math.erfc(-z / math.sqrt(2))


class VerdictConfidence(StrEnum):
    """How sure the verdict is, from the probability that the scenario meets its target."""

    MEETS = "meets"
    UNCERTAIN = "uncertain"
    MISSES = "misses"


VERDICT_CONFIDENCE_LABELS: dict[VerdictConfidence, str] = {
    VerdictConfidence.MEETS: "meets the target with at least 95 % probability",
    VerdictConfidence.UNCERTAIN: (
        "uncertain: between 5 % and 95 % probability of meeting the target"
    ),
    VerdictConfidence.MISSES: "misses the target with at least 95 % probability",
}
UNCERTAIN_BELOW = 0.95
UNCERTAIN_ABOVE = 0.05


def classify_verdict(probability_meets: float) -> VerdictConfidence:
    """Uncertain when 5 % < P(meets) < 95 %; the edges themselves count as sure.

    The edges get the band tolerance: a target exactly at the 95th percentile computes a hair
    below 0.95.
    """
    if at_least(probability_meets, UNCERTAIN_BELOW):
        return VerdictConfidence.MEETS
    if at_most(probability_meets, UNCERTAIN_ABOVE):
        return VerdictConfidence.MISSES
    return VerdictConfidence.UNCERTAIN


@dataclass(frozen=True)
class StepSpread:
    """One step's part in the scenario's spread: its EF, sigma and share of the log-variance."""

    label: str
    kind: StepKind
    median: float
    error_factor: ErrorFactor
    sigma: float
    variance_share: float


@dataclass(frozen=True)
class ScenarioDistribution:
    """The mitigated frequency as a lognormal: median, percentiles, mean and chance of meeting.

    `mu` = ln(median) and `sigma` are the parameters of the normal of ln(frequency);
    `error_factor` is the scenario's own p95 / p50; `steps` lists the counted steps in order.
    """

    median: float
    mu: float
    sigma: float
    error_factor: float
    p05: float
    p95: float
    mean: float
    tolerable_frequency: float
    probability_meets_target: float
    confidence: VerdictConfidence
    steps: tuple[StepSpread, ...]


def _probability_at_most(mu: float, sigma: float, tolerable: float, meets: bool) -> float:
    if sigma == 0:
        return 1.0 if meets else 0.0  # a point value: the exact verdict decides
    return normal_cdf((math.log(tolerable) - mu) / sigma)


def _with_shares(parts: Sequence[StepSpread]) -> tuple[StepSpread, ...]:
    total = math.fsum(part.sigma**2 for part in parts)
    # Built directly rather than with dataclasses.replace: a fifth of a whole study's spread.
    return tuple(
        StepSpread(part.label, part.kind, part.median, part.error_factor, part.sigma,
                   part.sigma**2 / total if total > 0 else 0.0)
        for part in parts
    )


def _spread_of(item: UncertainStep) -> StepSpread:
    step = item.step
    return StepSpread(step.label, step.kind, step.value, item.error_factor, item.sigma, 0.0)


def _distribution(
    median: float, mu: float, parts: Sequence[StepSpread], tolerable: float, meets: bool
) -> ScenarioDistribution:
    sigma = math.sqrt(math.fsum(part.sigma**2 for part in parts))
    probability = _probability_at_most(mu, sigma, tolerable, meets)
    return ScenarioDistribution(
        median=median,
        mu=mu,
        sigma=sigma,
        error_factor=_exp(Z95 * sigma),
        p05=_exp(mu - Z95 * sigma),
        p95=_exp(mu + Z95 * sigma),
        mean=_exp(mu + sigma**2 / 2),
        tolerable_frequency=tolerable,
        probability_meets_target=probability,
        confidence=classify_verdict(probability),
        steps=_with_shares(parts),
    )


def scenario_distribution(
    steps: Sequence[UncertainStep], tolerable_frequency: float
) -> ScenarioDistribution:
    """The mitigated frequency's lognormal: median = product of medians, log-variances add.

    Uncredited IPLs count neither in the median nor in the spread, as in compute_scenario.
    """
    result = compute_scenario([item.step for item in steps], tolerable_frequency)
    return line_distribution(
        steps, result.mitigated_frequency, result.tolerable_frequency, result.meets_target
    )


def line_distribution(
    steps: Sequence[UncertainStep], median: float, tolerable_frequency: float, meets: bool
) -> ScenarioDistribution:
    """The lognormal of a line whose median and exact verdict are already computed.

    `median` is compute_scenario's mitigated frequency for these steps (the product of the
    medians, uncredited IPLs left out) and `meets` its verdict; only the spread is added here.
    """
    counted = [item for item in steps if item.step.credited or item.step.kind != StepKind.IPL]
    # Summed logs: no underflow, unlike the product of the medians.
    mu = math.fsum(math.log(item.step.value) for item in counted)
    parts = [_spread_of(item) for item in counted]
    return _distribution(median, mu, parts, tolerable_frequency, meets)


@dataclass(frozen=True)
class ActionJudgement:
    """An action's expected reduction judged on the distribution, before and after."""

    factor: float
    before: ScenarioDistribution
    after: ScenarioDistribution
    probability_gain: float


def judge_action(
    before: ScenarioDistribution,
    factor: float,
    error_factor: ErrorFactor = NO_ERROR_FACTOR,
    label: str = "Action",
) -> ActionJudgement:
    """Apply an action's expected factor (0.1 for a risk reduction of 10) to the distribution.

    The factor is the median of its own lognormal: it multiplies the median and its error
    factor, if any, adds its log-variance.
    """
    checked = validate_probability(factor, f"{label} factor")
    added = UncertainStep(StepInput(StepKind.IPL, checked, label), error_factor)
    median = before.median * checked
    tolerable = before.tolerable_frequency
    parts = [*before.steps, _spread_of(added)]
    after = _distribution(
        median, before.mu + math.log(checked), parts, tolerable, at_most(median, tolerable)
    )
    gain = after.probability_meets_target - before.probability_meets_target
    return ActionJudgement(checked, before, after, gain)
