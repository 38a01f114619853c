"""Per-receptor figures: each rated receptor (people, environment, asset) gets its own line.

A conditional modifier reduces only the receptors it applies to (types.modifier_receptors), so
a presence or fatality probability no longer shrinks the environment or asset frequency. The
governing receptor is the one needing the largest risk reduction (mitigated / tolerable).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import lru_cache

from app.likelihood.demand import DemandKey, SifDemand, demand_key, sif_demand_of
from app.likelihood.exact import exact_ratio, log10_exact, to_float
from app.likelihood.frequency import check_scenario_inputs
from app.likelihood.types import Receptor, SilStatus, StepInput, input_error
from app.likelihood.validation import validate_frequency

__all__ = ["ReceptorAssessment", "ReceptorLine", "assess_receptors"]


@dataclass(frozen=True)
class ReceptorLine:
    """One rated receptor's figures; demand carries the mode, SIL target and formula."""

    receptor: Receptor
    tolerable_frequency: float
    modifier_product: float
    mitigated_frequency: float
    ratio: float
    gap_orders: float
    required_rrf: float
    meets_target: bool
    demand: SifDemand


@dataclass(frozen=True)
class ReceptorAssessment:
    """Every rated receptor's line (in Receptor order), the governing one and those not rated."""

    lines: tuple[ReceptorLine, ...]
    governing: ReceptorLine
    not_rated: tuple[Receptor, ...]


def _line(steps: Sequence[StepInput], receptor: Receptor, tolerable: float) -> ReceptorLine:
    return _line_of(receptor, tolerable, demand_key(steps, receptor))


# Remembered per receptor, target and set of numbers (labels play no part), as sif_demand_of.
@lru_cache(maxsize=65_536, typed=True)
def _line_of(receptor: Receptor, tolerable: float, key: DemandKey) -> ReceptorLine:
    demand = sif_demand_of(key, tolerable)
    ratio = exact_ratio(demand.mitigated_frequency, tolerable)
    return ReceptorLine(
        receptor=receptor,
        tolerable_frequency=tolerable,
        modifier_product=demand.modifier_product,
        mitigated_frequency=demand.mitigated_frequency,
        ratio=to_float(ratio),
        gap_orders=log10_exact(ratio) if ratio > 0 else -math.inf,
        required_rrf=demand.required_rrf,
        meets_target=demand.sil_target.status is SilStatus.NONE_NEEDED,
        demand=demand,
    )


def assess_receptors(
    steps: Sequence[StepInput], tolerable_by_receptor: Mapping[Receptor, float | None]
) -> ReceptorAssessment:
    """Lines for each receptor with a tolerable frequency; None or absent means not rated.

    People may be not rated (a scenario with no injury potential); at least one receptor must be.
    """
    rated = {r: f for r, f in tolerable_by_receptor.items() if f is not None}
    if not rated:
        raise input_error(
            "receptor_rated",
            "rate at least one receptor (people, environment or asset) with a tolerable "
            "frequency.",
            label="Receptors",
        )
    first_tolerable = next(iter(rated.values()))
    # The scenario's rules, checked as computing it would (the figures come per line).
    check_scenario_inputs(steps, validate_frequency(first_tolerable, "Tolerable frequency"))
    lines = tuple(
        _line(steps, r, validate_frequency(rated[r], f"Tolerable frequency ({r})"))
        for r in Receptor if r in rated
    )
    governing = max(lines, key=lambda line: line.ratio)  # first in Receptor order on a tie
    not_rated = tuple(r for r in Receptor if r not in rated)
    return ReceptorAssessment(lines, governing, not_rated)
