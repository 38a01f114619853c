"""Demand on a safety instrumented function (SIF) added to a scenario, and the target it needs.

The demand rate is how often the process reaches the condition the added function acts on:
initiating frequency x enabling conditions x PFD of each credited layer acting before it.
Conditional modifiers (ignition, presence, vulnerability) act after the release and never
reduce it (CCPS 2001 concept; recalled). Mode: low demand at most once a year, else high
(IEC 61511-1:2016, definitions of the modes of operation; recalled). Low demand: required
RRF = mitigated / tolerable. High demand: required PFH = tolerable / (8760 x conditional
modifiers x PFD of layers acting after the function) per hour.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from functools import lru_cache

from app.likelihood.exact import exact_product, to_float
from app.likelihood.numbers import format_number
from app.likelihood.sil import LOW_DEMAND_LIMIT_PER_YEAR, sil_target
from app.likelihood.types import (
    DemandMode,
    Receptor,
    SilStatus,
    SilTarget,
    StepInput,
    StepKind,
    modifier_receptors,
)
from app.likelihood.units import HOURS_PER_YEAR

__all__ = ["DemandKey", "SifDemand", "demand_key", "modifiers_for", "sif_demand", "sif_demand_of"]


@dataclass(frozen=True)
class SifDemand:
    """The demand an added SIF would see, its mode, the target and the formula behind it."""

    demand_rate_per_year: float
    demand_mode: DemandMode
    modifier_product: float
    after_layers_product: float
    mitigated_frequency: float
    tolerable_frequency: float
    required_rrf: float
    required_pfh: float | None
    sil_target: SilTarget
    formula: str


def _credited_layers(steps: Sequence[StepInput], *, after: bool) -> list[float]:
    return [
        s.value for s in steps
        if s.kind == StepKind.IPL and s.credited and s.acts_after_sif == after
    ]


def modifiers_for(steps: Sequence[StepInput], receptor: Receptor | None) -> list[StepInput]:
    """The conditional modifiers that reduce the frequency for a receptor (None: all of them)."""
    return [
        s for s in steps
        if s.kind == StepKind.CONDITIONAL_MODIFIER
        and (receptor is None or receptor in modifier_receptors(s))
    ]


def _demand_factors(steps: Sequence[StepInput]) -> list[float]:
    before = [
        s.value for s in steps
        if s.kind in (StepKind.INITIATING_EVENT, StepKind.ENABLING_CONDITION)
    ]
    return [*before, *_credited_layers(steps, after=False)]


def _formula(demand: float, target: SilTarget, mitigated: float, tolerable: float,
             after: float) -> str:
    """One line a reader can redo by hand: the mode, why, and the target's arithmetic."""
    limit = f"{LOW_DEMAND_LIMIT_PER_YEAR:g}"
    low = target.demand_mode is DemandMode.LOW
    sign = "≤" if low else ">"
    head = f"{'Low' if low else 'High'} demand ({format_number(demand)}/yr {sign} {limit}/yr)"
    if target.status is SilStatus.NONE_NEEDED:
        return (f"{head}: mitigated {format_number(mitigated)} ≤ tolerable "
                f"{format_number(tolerable)}, no added function needed")
    if low:
        return (f"{head}: RRF = {format_number(mitigated)} ÷ {format_number(tolerable)} "
                f"= {format_number(target.required_rrf)}")
    pfh = "" if target.required_pfh is None else f" = {format_number(target.required_pfh)}/h"
    return (f"{head}: PFH = {format_number(tolerable)} ÷ ({HOURS_PER_YEAR} h x "
            f"{format_number(after)}){pfh}")


DemandKey = tuple[tuple[float, ...], tuple[float, ...], tuple[float, ...]]
"""A demand's factors, each list sorted: before the function, modifiers, layers after it."""


def demand_key(steps: Sequence[StepInput], receptor: Receptor | None = None) -> DemandKey:
    """What sif_demand reads of the steps: the three lists of factors, each sorted (the
    products are exact, so their order cannot change a figure)."""
    return (_sorted_floats(_demand_factors(steps)),
            _sorted_floats(s.value for s in modifiers_for(steps, receptor)),
            _sorted_floats(_credited_layers(steps, after=True)))


def _sorted_floats(values: Iterable[float]) -> tuple[float, ...]:
    return tuple(sorted(map(float, values)))


def sif_demand(
    steps: Sequence[StepInput], tolerable_frequency: float, receptor: Receptor | None = None
) -> SifDemand:
    """Demand rate, mode and SIL target of a SIF added to this scenario, for one receptor.

    The steps are taken as valid (compute_scenario checks them); receptor None applies every
    conditional modifier, as the whole-scenario figures do.
    """
    return sif_demand_of(demand_key(steps, receptor), tolerable_frequency)


# Remembered per distinct set of numbers (labels play no part): a study repeats a few
# products over thousands of scenarios, so a whole-study computation mostly looks them up.
# typed: an int and a float tolerable frequency are kept apart, as written.
@lru_cache(maxsize=65_536, typed=True)
def sif_demand_of(key: DemandKey, tolerable_frequency: float) -> SifDemand:
    """sif_demand from its factors (demand_key)."""
    before, modifier_values, after_values = key
    # Each product is exact over the numbers as typed and rounded once (see exact.py).
    demand_exact = exact_product(before)
    modifiers_exact = exact_product(modifier_values)
    after_layers_exact = exact_product(after_values)
    demand, modifiers = to_float(demand_exact), to_float(modifiers_exact)
    after_layers = to_float(after_layers_exact)
    mitigated = to_float(demand_exact * modifiers_exact * after_layers_exact)
    after = to_float(modifiers_exact * after_layers_exact)
    target = sil_target(
        mitigated, tolerable_frequency, demand_rate_per_year=demand, mitigation_after_demand=after
    )
    return SifDemand(
        demand_rate_per_year=demand,
        demand_mode=target.demand_mode,
        modifier_product=modifiers,
        after_layers_product=after_layers,
        mitigated_frequency=mitigated,
        tolerable_frequency=float(tolerable_frequency),
        required_rrf=target.required_rrf,
        required_pfh=target.required_pfh,
        sil_target=target,
        formula=_formula(demand, target, mitigated, float(tolerable_frequency), after),
    )
