"""IEC 61511-1:2016 SIL bands (low demand PFD/RRF, high demand PFH) and the SIL target of a gap."""

from __future__ import annotations

import math

from app.likelihood.exact import exact_ratio, to_float
from app.likelihood.types import DemandMode, SilStatus, SilTarget, input_error
from app.likelihood.units import HOURS_PER_YEAR as HOURS_PER_YEAR  # services import it here
from app.likelihood.validation import at_least, at_most, validate_frequency

# IEC 61511-1:2016 (same numbers in IEC 61508-1:2010, 7.6.2): values secondary.
SIL_PFD_RANGES: dict[int, tuple[float, float]] = {
    1: (1e-2, 1e-1),
    2: (1e-3, 1e-2),
    3: (1e-4, 1e-3),
    4: (1e-5, 1e-4),
}
"""Low demand PFDavg per SIL as [low, high): a PFD of 0.1 is not SIL 1."""

SIL_RRF_RANGES: dict[int, tuple[float, float]] = {
    1: (10.0, 100.0),
    2: (100.0, 1_000.0),
    3: (1_000.0, 10_000.0),
    4: (10_000.0, 100_000.0),
}
"""Low demand risk reduction factor per SIL as (low, high]: RRF 100 is SIL 1."""

SIL_PFH_RANGES: dict[int, tuple[float, float]] = {
    1: (1e-6, 1e-5),
    2: (1e-7, 1e-6),
    3: (1e-8, 1e-7),
    4: (1e-9, 1e-8),
}
"""High demand / continuous PFH per hour per SIL as [low, high)."""

_BEYOND_LOW = "Beyond one function (RRF > 100,000)"

LOW_DEMAND_LIMIT_PER_YEAR = 1.0
"""Low demand means at most one demand a year (IEC 61508-4:2010, 3.5.16; secondary)."""


def _band(value: float, ranges: dict[int, tuple[float, float]]) -> int | None:
    """The SIL whose half-open [low, high) range holds value, edges within tolerance."""
    for sil, (low, high) in ranges.items():
        if at_least(value, low) and not at_least(value, high):
            return sil
    return None


def pfd_band(pfd: float) -> int | None:
    """The low-demand SIL band a PFDavg lies in, or None outside SIL 1 to 4."""
    return _band(pfd, SIL_PFD_RANGES)


def sil_for_pfh(pfh: float) -> int | None:
    """The high-demand SIL band a PFH (per hour) lies in, or None outside SIL 1 to 4."""
    return _band(pfh, SIL_PFH_RANGES)


def _none_needed(rrf: float, mode: DemandMode) -> SilTarget:
    return SilTarget(SilStatus.NONE_NEEDED, None, mode, max(1.0, rrf), None, None, "None needed")


def sil_for_rrf(rrf: float) -> SilTarget:
    """Low-demand SIL target for a required risk reduction factor (RRF <= 1: none needed)."""
    if math.isnan(rrf) or rrf <= 0:
        raise input_error(
            "rrf_positive",
            f"a risk reduction factor must be a number above 0 (got {rrf:g}).",
            label="Required RRF",
        )
    if at_most(rrf, 1.0):
        return _none_needed(rrf, DemandMode.LOW)
    pfd = 1 / rrf
    if at_most(rrf, SIL_RRF_RANGES[1][0]):
        status, sil, label = SilStatus.BELOW_SIL1, None, "Below SIL 1 (RRF ≤ 10)"
    else:
        found = next((s for s, (_, high) in SIL_RRF_RANGES.items() if at_most(rrf, high)), None)
        if found is None:
            status, sil, label = SilStatus.BEYOND_ONE_FUNCTION, None, _BEYOND_LOW
        else:
            status, sil, label = SilStatus.SIL, found, f"SIL {found}"
    return SilTarget(status, sil, DemandMode.LOW, rrf, pfd, None, label)


def _high_demand_target(rrf: float, pfh: float) -> SilTarget:
    sil = sil_for_pfh(pfh)
    if sil is not None:
        status, label = SilStatus.SIL, f"SIL {sil}"
    elif at_least(pfh, SIL_PFH_RANGES[1][1]):
        status, label = SilStatus.BELOW_SIL1, "Below SIL 1 (PFH ≥ 1e-5 per hour)"
    else:
        status, label = SilStatus.BEYOND_ONE_FUNCTION, "Beyond one function (PFH < 1e-9 per hour)"
    return SilTarget(status, sil, DemandMode.HIGH, rrf, None, pfh, label)


def demand_mode_for(demand_rate_per_year: float) -> DemandMode:
    """High demand when the demand rate on an added function exceeds once a year."""
    if at_most(demand_rate_per_year, LOW_DEMAND_LIMIT_PER_YEAR):
        return DemandMode.LOW
    return DemandMode.HIGH


def _checked_mitigated(mitigated_frequency: float) -> float:
    if not (math.isfinite(mitigated_frequency) and mitigated_frequency >= 0):
        raise input_error(
            "frequency_positive",
            f"a frequency must be a finite number of events per year, 0 or more "
            f"(got {mitigated_frequency:g}).",
            label="Mitigated frequency",
        )
    return mitigated_frequency


def sil_target(
    mitigated_frequency: float,
    tolerable_frequency: float,
    *,
    demand_rate_per_year: float | None = None,
    mitigation_after_demand: float = 1.0,
) -> SilTarget:
    """SIL target for a function added to close the gap from mitigated to tolerable frequency.

    demand_rate_per_year: how often the process reaches the condition the function acts on
    (initiating frequency x enabling conditions x PFD of layers acting before it); the mode
    follows from it (IEC 61511-1:2016 mode definitions). mitigation_after_demand: the product
    of the conditional modifiers and the PFDs of layers acting after the function; in high
    demand the required PFH is tolerable / (8760 x mitigation_after_demand) per hour.
    Without a demand rate the mitigated frequency stands in for it (the older reading).
    """
    tolerable = validate_frequency(tolerable_frequency, "Tolerable frequency")
    mitigated = _checked_mitigated(mitigated_frequency)
    ratio = to_float(exact_ratio(mitigated, tolerable))
    demand = mitigated if demand_rate_per_year is None else demand_rate_per_year
    mode = demand_mode_for(demand)
    if at_most(ratio, 1.0):
        return _none_needed(ratio, mode)
    if mode is DemandMode.LOW:
        return sil_for_rrf(ratio)
    # In high demand a dangerous failure meets a demand at once: only what acts after it helps.
    return _high_demand_target(ratio, tolerable / (HOURS_PER_YEAR * mitigation_after_demand))
