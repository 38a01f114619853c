"""PFDavg of a safety function from the simplified equations of IEC 61508-6:2010 Annex B.

Equations recalled from B.3.2.2 (see REFERENCE.md section 2). Rates are per hour, times in
hours. tCE and tGE are the channel and group equivalent mean down times.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from enum import StrEnum

from app.likelihood.types import input_error
from app.likelihood.units import HOURS_PER_YEAR
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
    proof_test_coverage: float = 1.0
    mission_time_hours: float | None = None
    """proof_test_coverage: the fraction of lambda_DU a proof test reveals; the rest is found only
    at the end of the mission time, when the equipment is renewed or overhauled."""

    def __post_init__(self) -> None:
        known = ", ".join(Architecture)
        _require(self.architecture in tuple(Architecture), "architecture", "architecture",
                 f"unknown architecture '{self.architecture}' (known: {known}).")
        self._check_rates()
        self._check_times()
        self._check_common_cause()
        self._check_coverage()

    def _check_coverage(self) -> None:
        _require(_fraction_ok(self.proof_test_coverage), "coverage_range", "proof_test_coverage",
                 f"proof-test coverage must be from 0 to 1 (got {self.proof_test_coverage}).")
        if self.proof_test_coverage >= 1:
            return
        mission = self.mission_time_hours
        _require(mission is not None and math.isfinite(mission)
                 and mission >= self.proof_test_interval_hours,
                 "mission_time_required", "mission_time_hours",
                 "with proof-test coverage below 1, give a mission time in hours, at least the "
                 f"proof-test interval (got {mission}).")

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


def _down_times(s: SifInputs, du: float, dd: float, t1: float) -> tuple[float, float]:
    """Channel (tCE) and group (tGE) equivalent mean down times in hours."""
    undetected, detected = du / (du + dd), dd / (du + dd)
    t_ce = undetected * (t1 / 2 + s.effective_mrt_hours) + detected * s.mttr_hours
    t_ge = undetected * (t1 / 3 + s.effective_mrt_hours) + detected * s.mttr_hours
    return t_ce, t_ge


def _annex_pfd(s: SifInputs, du: float, dd: float, t1: float) -> float:
    """The Annex B equation of s's architecture at these rates and interval."""
    if du + dd <= 0:
        return 0.0
    t_ce, t_ge = _down_times(s, du, dd, t1)
    if s.architecture == Architecture.ONE_OO_ONE:
        return (du + dd) * t_ce
    if s.architecture == Architecture.TWO_OO_TWO:
        return 2 * (du + dd) * t_ce
    beta, beta_d = s.effective_beta, s.effective_beta_d
    independent = (1 - beta_d) * dd + (1 - beta) * du
    common_cause = beta_d * dd * s.mttr_hours + beta * du * (t1 / 2 + s.effective_mrt_hours)
    return _PAIR_FACTOR[s.architecture] * independent**2 * t_ce * t_ge + common_cause


def _pfd_at(s: SifInputs, t1: float) -> float:
    """PFDavg at interval t1; with coverage below 1 the untested share of lambda_DU is summed
    as a second part tested only at the mission time (cross terms between the parts left out:
    an approximation, exact for 1oo1 as in REFERENCE section 2's coverage form)."""
    coverage = s.proof_test_coverage
    tested = _annex_pfd(s, coverage * s.lambda_du, s.lambda_dd, t1)
    if coverage >= 1 or s.mission_time_hours is None:
        return tested
    return tested + _annex_pfd(s, (1 - coverage) * s.lambda_du, 0.0, s.mission_time_hours)


def pfd_avg(inputs: SifInputs) -> float:
    """Average probability of failure on demand by the IEC 61508-6 Annex B equations.

    May exceed 1 where the simplified equations do not hold (see simplified_check); use
    storable_pfd for a value to keep.
    """
    return _pfd_at(inputs, inputs.proof_test_interval_hours)


SIMPLIFIED_LIMIT = 0.1
"""The simplified equations assume lambda_DU x T1 small compared with 1; above 0.1 the linear
approximation is off by more than about 3 % (common practice, no source)."""


@dataclass(frozen=True)
class SimplifiedCheck:
    """Whether the simplified equations hold: lambda_DU x T (T1, or the mission time for the
    untested share) against SIMPLIFIED_LIMIT, and a sentence saying so when they do not."""

    lambda_du_t: float
    holds: bool
    message: str


def simplified_check(inputs: SifInputs) -> SimplifiedCheck:
    """Warn when lambda_DU x T is not small compared with 1."""
    coverage, mission = inputs.proof_test_coverage, inputs.mission_time_hours
    exposure = coverage * inputs.lambda_du * inputs.proof_test_interval_hours
    if coverage < 1 and mission is not None:
        exposure = max(exposure, (1 - coverage) * inputs.lambda_du * mission)
    if exposure <= SIMPLIFIED_LIMIT:
        return SimplifiedCheck(exposure, True, "")
    return SimplifiedCheck(
        exposure, False,
        f"lambda_DU x T is {exposure:.3g}, not small compared with 1 (above "
        f"{SIMPLIFIED_LIMIT:g}): the simplified equations overstate PFDavg here; use an exact "
        f"or Markov model.",
    )


def storable_pfd(inputs: SifInputs) -> float:
    """The PFDavg as a value to credit; a result above 1 (or below 1e-9) is refused."""
    pfd = pfd_avg(inputs)
    if pfd > 1:
        raise input_error(
            "pfd_above_one",
            f"the simplified equations give PFDavg {pfd:.3g}, above 1: they do not hold for "
            f"these inputs (lambda_DU x T1 too large). Shorten the interval or check the rates.",
            label="PFDavg",
        )
    return validate_probability(pfd, "PFDavg")


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
