"""PFDavg of a safety function from the simplified equations of IEC 61508-6:2010 Annex B.

Equations from memory of B.3.2.2 (see REFERENCE.md section 2). Rates are per hour, times in
hours. tCE and tGE are the channel and group equivalent mean down times.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from enum import StrEnum

from app.likelihood.sil import HOURS_PER_YEAR
from app.likelihood.types import input_error
from app.likelihood.validation import validate_probability

PROOF_TEST_INTERVAL_CAP_HOURS = 100.0 * HOURS_PER_YEAR
"""The longest proof-test interval searched; longest_proof_test_interval returns it if it meets."""

_SEARCH_REL_TOL = 1e-9


class Architecture(StrEnum):
    """Voting arrangement of the channels of a safety function."""

    ONE_OO_ONE = "1oo1"
    ONE_OO_TWO = "1oo2"
    TWO_OO_TWO = "2oo2"
    TWO_OO_THREE = "2oo3"


_REDUNDANT = (Architecture.ONE_OO_TWO, Architecture.TWO_OO_THREE)
_PAIR_FACTOR = {Architecture.ONE_OO_TWO: 2.0, Architecture.TWO_OO_THREE: 6.0}


def _require(ok: bool, rule: str, field: str, sentence: str) -> None:
    if not ok:
        raise input_error(rule, sentence, label=field)


def _check_interval(hours: float) -> None:
    _require(
        math.isfinite(hours) and hours > 0,
        "proof_test_interval_positive",
        "proof_test_interval_hours",
        f"the proof-test interval must be a finite number of hours above 0 (got {hours:g}).",
    )


def _rate_ok(value: float) -> bool:
    return math.isfinite(value) and value >= 0


def _fraction_ok(value: float | None) -> bool:
    return value is None or (math.isfinite(value) and 0 <= value <= 1)


@dataclass(frozen=True, kw_only=True)
class SifInputs:
    """One safety function's data; invalid data cannot be built (LikelihoodInputError)."""

    architecture: Architecture
    lambda_du: float
    lambda_dd: float
    proof_test_interval_hours: float
    beta: float | None = None
    beta_d: float | None = None
    mttr_hours: float = 8.0
    mrt_hours: float | None = None

    def __post_init__(self) -> None:
        known = ", ".join(Architecture)
        _require(self.architecture in tuple(Architecture), "architecture", "architecture",
                 f"unknown architecture '{self.architecture}' (known: {known}).")
        self._check_rates()
        self._check_times()
        self._check_common_cause()

    def _check_rates(self) -> None:
        for field, rate in (("lambda_du", self.lambda_du), ("lambda_dd", self.lambda_dd)):
            _require(_rate_ok(rate), "failure_rate_range", field,
                     f"a failure rate must be a finite number per hour, 0 or more (got {rate:g}).")
        _require(self.lambda_du + self.lambda_dd > 0, "failure_rate_positive", "lambda_du",
                 "the dangerous failure rate (undetected plus detected) must be above 0.")

    def _check_times(self) -> None:
        _check_interval(self.proof_test_interval_hours)
        for field, hours in (("mttr_hours", self.mttr_hours), ("mrt_hours", self.mrt_hours)):
            _require(hours is None or _rate_ok(hours), "repair_time_range", field,
                     f"a repair time must be a finite number of hours, 0 or more (got {hours}).")

    def _check_common_cause(self) -> None:
        _require(self.architecture not in _REDUNDANT or self.beta is not None, "beta_required",
                 "beta", f"a {self.architecture} function needs a common-cause fraction beta.")
        for field, share in (("beta", self.beta), ("beta_d", self.beta_d)):
            _require(_fraction_ok(share), "beta_range", field,
                     f"a common-cause fraction must be from 0 to 1 (got {share}).")

    @property
    def lambda_d(self) -> float:
        """Dangerous failure rate, detected plus undetected (per hour)."""
        return self.lambda_du + self.lambda_dd

    @property
    def effective_beta(self) -> float:
        """Beta for undetected failures (0 when not given: single-channel arrangements)."""
        return self.beta or 0.0

    @property
    def effective_beta_d(self) -> float:
        """Beta for detected failures; half of beta when not given, as in the annex's tables."""
        return self.effective_beta / 2 if self.beta_d is None else self.beta_d

    @property
    def effective_mrt_hours(self) -> float:
        """Mean repair time after a proof test finds a fault; the MTTR when not given."""
        return self.mttr_hours if self.mrt_hours is None else self.mrt_hours


def _down_times(s: SifInputs, t1: float) -> tuple[float, float]:
    """Channel (tCE) and group (tGE) equivalent mean down times in hours."""
    undetected, detected = s.lambda_du / s.lambda_d, s.lambda_dd / s.lambda_d
    t_ce = undetected * (t1 / 2 + s.effective_mrt_hours) + detected * s.mttr_hours
    t_ge = undetected * (t1 / 3 + s.effective_mrt_hours) + detected * s.mttr_hours
    return t_ce, t_ge


def _pfd_at(s: SifInputs, t1: float) -> float:
    t_ce, t_ge = _down_times(s, t1)
    if s.architecture == Architecture.ONE_OO_ONE:
        return s.lambda_d * t_ce
    if s.architecture == Architecture.TWO_OO_TWO:
        return 2 * s.lambda_d * t_ce
    beta, beta_d = s.effective_beta, s.effective_beta_d
    independent = (1 - beta_d) * s.lambda_dd + (1 - beta) * s.lambda_du
    common_cause = (
        beta_d * s.lambda_dd * s.mttr_hours
        + beta * s.lambda_du * (t1 / 2 + s.effective_mrt_hours)
    )
    return _PAIR_FACTOR[s.architecture] * independent**2 * t_ce * t_ge + common_cause


def pfd_avg(inputs: SifInputs) -> float:
    """Average probability of failure on demand by the IEC 61508-6 Annex B equations."""
    return _pfd_at(inputs, inputs.proof_test_interval_hours)


def longest_proof_test_interval(inputs: SifInputs, target_pfd: float) -> float | None:
    """Longest T1 (hours) with pfd_avg <= target; None if none meets it; the cap if it does."""
    target = validate_probability(target_pfd, "Target PFD")
    if _pfd_at(inputs, 0.0) > target:
        return None
    low, high = 0.0, PROOF_TEST_INTERVAL_CAP_HOURS
    if _pfd_at(inputs, high) <= target:
        return high
    # PFDavg rises with T1 for every architecture, so bisection keeps pfd(low) <= target.
    while high - low > _SEARCH_REL_TOL * high:
        middle = (low + high) / 2
        low, high = (middle, high) if _pfd_at(inputs, middle) <= target else (low, middle)
    return low if low > 0 else None


def with_interval(inputs: SifInputs, hours: float) -> SifInputs:
    """The same function with another proof-test interval."""
    return replace(inputs, proof_test_interval_hours=hours)


def exact_1oo1_time_average(lambda_du: float, t1_hours: float) -> float:
    """Exact time-average of 1 - exp(-lambda t) over [0, T]: 1 - (1 - exp(-lambda T))/(lambda T)."""
    _require(math.isfinite(lambda_du) and lambda_du > 0, "failure_rate_positive", "lambda_du",
             f"a failure rate must be a finite number per hour above 0 (got {lambda_du:g}).")
    _check_interval(t1_hours)
    x = lambda_du * t1_hours
    if x >= 0.5:
        return 1 + math.expm1(-x) / x
    # The closed form cancels badly for small x; its series sum x^k (-1)^(k+1) / (k+1)! does not.
    return math.fsum((-1) ** (k + 1) * x**k / math.factorial(k + 1) for k in range(1, 30))
