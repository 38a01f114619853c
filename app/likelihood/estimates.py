"""A round of independent estimates: lowest, highest, spread, geometric mean, median, log axis.

The geometric mean is the team's pooled median when each judgement is read as a lognormal
(equal-weight logarithmic pool, Clemen & Winkler, Risk Analysis 19(2), 1999). A spread above
one order of magnitude is called out for discussion (common practice, no source).
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Sequence
from dataclasses import dataclass
from enum import StrEnum
from fractions import Fraction

from app.likelihood.exact import as_decimal, exact_ratio, log10_exact
from app.likelihood.types import StepKind, input_error
from app.likelihood.validation import at_most, validate_frequency, validate_probability

DISCUSS_ABOVE_ORDERS = 1.0
"""A spread (log10 of highest over lowest) above this many orders of magnitude asks for talk."""


class EstimateUnit(StrEnum):
    """What an estimate counts: events per year (initiating event) or a probability."""

    PER_YEAR = "per_year"
    PROBABILITY = "probability"


ESTIMATE_UNIT_LABELS: dict[EstimateUnit, str] = {
    EstimateUnit.PER_YEAR: "per year",
    EstimateUnit.PROBABILITY: "probability",
}


def unit_for_kind(kind: StepKind) -> EstimateUnit:
    """The unit of a step's value: per year for the initiating event, a probability otherwise."""
    return EstimateUnit.PER_YEAR if kind == StepKind.INITIATING_EVENT else EstimateUnit.PROBABILITY


def validate_estimate(value: float, unit: EstimateUnit, label: str = "") -> float:
    """Return value if it is a valid frequency (per year) or probability; else raise."""
    if unit == EstimateUnit.PER_YEAR:
        return validate_frequency(value, label)
    return validate_probability(value, label)


@dataclass(frozen=True)
class LogAxis:
    """A decade axis from 10**low_decade to 10**high_decade (low_decade < high_decade)."""

    low_decade: int
    high_decade: int

    def position(self, value: float) -> float:
        """Where a positive value sits on the axis, 0 at the low end and 1 at the high end."""
        if not value > 0:
            return 0.0
        span = self.high_decade - self.low_decade
        where = (math.log10(value) - self.low_decade) / span
        return min(1.0, max(0.0, where))

    def ticks(self) -> tuple[float, ...]:
        """The powers of ten on the axis, lowest first (for grid lines and labels)."""
        return tuple(10.0**power for power in range(self.low_decade, self.high_decade + 1))


def _decade_floor(value: float) -> int:
    """The largest k with 10**k <= value, exact on the value as typed (1e-3 -> -3)."""
    exact = as_decimal(value)
    power = math.floor(math.log10(value))
    while Fraction(10) ** (power + 1) <= exact:
        power += 1
    while Fraction(10) ** power > exact:
        power -= 1
    return power


def _decade_ceiling(value: float) -> int:
    """The smallest k with value <= 10**k (1e-3 -> -3, 2e-3 -> -2)."""
    power = _decade_floor(value)
    return power if Fraction(10) ** power == as_decimal(value) else power + 1


def log_axis_for(values: Sequence[float], unit: EstimateUnit) -> LogAxis:
    """The whole decades that cover the values; a single decade point gets one decade each side.

    A probability axis never goes above 10**0 = 1: it grows downwards instead.
    """
    checked = _validated(values, unit)
    low, high = _decade_floor(min(checked)), _decade_ceiling(max(checked))
    if low == high:
        low, high = low - 1, high + 1
    if unit == EstimateUnit.PROBABILITY and high > 0:
        low, high = low - high, 0
    return LogAxis(low, high)


@dataclass(frozen=True)
class RoundStats:
    """What the room sees after a reveal: every figure of one round of estimates.

    `positions` are the estimates' places on `axis` (0..1), in the order the estimates came.
    `log_sd` is the sample standard deviation of the natural logs (None for one estimate).
    """

    unit: EstimateUnit
    estimates: tuple[float, ...]
    count: int
    lowest: float
    highest: float
    spread_orders: float
    geometric_mean: float
    median: float
    log_sd: float | None
    discuss: bool
    axis: LogAxis
    positions: tuple[float, ...]


def _validated(values: Sequence[float], unit: EstimateUnit) -> tuple[float, ...]:
    if not values:
        raise input_error(
            "estimates_required", "a round needs at least one estimate.", label="Estimates"
        )
    return tuple(
        validate_estimate(value, unit, f"Estimate {number}")
        for number, value in enumerate(values, start=1)
    )


def round_stats(values: Sequence[float], unit: EstimateUnit) -> RoundStats:
    """Lowest, highest, spread in orders of magnitude, geometric mean, median and log axis."""
    estimates = _validated(values, unit)
    lowest, highest = min(estimates), max(estimates)
    spread = log10_exact(exact_ratio(highest, lowest))  # exact: 1e-2 over 1e-3 is 1.0
    axis = log_axis_for(estimates, unit)
    return RoundStats(
        unit=unit,
        estimates=estimates,
        count=len(estimates),
        lowest=lowest,
        highest=highest,
        spread_orders=spread,
        # Clamped: the mean of logs, rounded, can land a hair outside the estimates.
        geometric_mean=min(highest, max(lowest, statistics.geometric_mean(estimates))),
        median=statistics.median(estimates),
        log_sd=statistics.stdev(map(math.log, estimates)) if len(estimates) > 1 else None,
        discuss=not at_most(spread, DISCUSS_ABOVE_ORDERS),
        axis=axis,
        positions=tuple(axis.position(value) for value in estimates),
    )
