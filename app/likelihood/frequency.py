"""Scenario arithmetic: initiating frequency x probabilities x credited IPL PFDs, against a target.

Products are exact over the numbers as typed and rounded once (see exact.py), so the order of
the steps never changes a result and a credited layer can never raise the frequency.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from fractions import Fraction
from functools import lru_cache

from app.likelihood.demand import sif_demand
from app.likelihood.exact import as_decimal, exact_product, exact_ratio, log10_exact, to_float
from app.likelihood.types import (
    LadderPoint,
    ScenarioResult,
    SilStatus,
    StepInput,
    StepKind,
    input_error,
)
from app.likelihood.validation import validate_frequency, validate_probability

__all__ = ["check_scenario_inputs", "compute_scenario", "validate_frequency",
           "validate_probability"]

_LADDER_ORDER = (
    StepKind.INITIATING_EVENT,
    StepKind.ENABLING_CONDITION,
    StepKind.CONDITIONAL_MODIFIER,
    StepKind.IPL,
)


def _validate_step(step: StepInput) -> None:
    if step.kind not in _LADDER_ORDER:
        kinds = ", ".join(_LADDER_ORDER)
        raise input_error(
            "step_kind", f"unknown step kind '{step.kind}' (known: {kinds}).", label=step.label
        )
    if step.kind == StepKind.INITIATING_EVENT:
        validate_frequency(step.value, step.label, kind=step.kind)
    else:
        validate_probability(step.value, step.label, kind=step.kind)


def _the_initiating_event(steps: Sequence[StepInput]) -> StepInput:
    found = [step for step in steps if step.kind == StepKind.INITIATING_EVENT]
    if len(found) == 1:
        return found[0]
    named = ", ".join(f"'{step.label}'" for step in found if step.label)
    counted = "none" if not found else f"{len(found)}" + (f": {named}" if named else "")
    sentence = f"a scenario needs exactly one initiating event (found {counted})."
    if not found:
        raise input_error("one_initiating_event", sentence)
    extra = found[1]  # the first one too many
    raise input_error("one_initiating_event", sentence, label=extra.label, kind=extra.kind)


def _ladder(ordered: Sequence[StepInput]) -> tuple[LadderPoint, ...]:
    running = _running_products(tuple(float(step.value) for step in ordered))
    return tuple(LadderPoint(step.label, step.kind, step.value, after)
                 for step, after in zip(ordered, running, strict=True))


# Remembered per sequence of numbers (labels play no part): a study repeats a few ladders
# over thousands of scenarios. Exact, as the rest of the arithmetic (see exact.py).
@lru_cache(maxsize=65_536)
def _running_products(values: tuple[float, ...]) -> tuple[float, ...]:
    """The frequency after each factor, each running product exact and rounded once."""
    points, running = [], Fraction(1)
    for value in values:
        running *= as_decimal(value)
        points.append(to_float(running))
    return tuple(points)


def _in_ladder_order(steps: Sequence[StepInput]) -> list[StepInput]:
    counted = [step for step in steps if step.credited or step.kind != StepKind.IPL]
    return sorted(counted, key=lambda step: _LADDER_ORDER.index(step.kind))


def _product_of(steps: Sequence[StepInput], kind: StepKind) -> float:
    return to_float(exact_product(step.value for step in steps if step.kind == kind))


def check_scenario_inputs(steps: Sequence[StepInput], tolerable_frequency: float
                          ) -> tuple[StepInput, float]:
    """Every rule compute_scenario checks, raising as it would; the initiating event and the
    tolerable frequency. Past these nothing in compute_scenario raises: a frequency is at most
    1e4 a year and a probability at most 1, so every product is finite."""
    for step in steps:
        _validate_step(step)
    initiating = _the_initiating_event(steps)
    return initiating, validate_frequency(tolerable_frequency, "Tolerable frequency")


def compute_scenario(steps: Sequence[StepInput], tolerable_frequency: float) -> ScenarioResult:
    """Mitigated frequency, gap to the tolerable frequency, SIL target and ladder of a scenario."""
    initiating, tolerable = check_scenario_inputs(steps, tolerable_frequency)
    ordered = _in_ladder_order(steps)  # sorted() is stable: given order kept within a kind
    demand = sif_demand(ordered, tolerable)  # mode from the demand rate, not the mitigated one
    mitigated = demand.mitigated_frequency  # the exact product of every counted step
    target = demand.sil_target
    ratio = exact_ratio(mitigated, tolerable)  # the same ratio sil_target classified
    return ScenarioResult(
        initiating_frequency=float(initiating.value),
        enabling_product=_product_of(ordered, StepKind.ENABLING_CONDITION),
        modifier_product=_product_of(ordered, StepKind.CONDITIONAL_MODIFIER),
        ipl_product=_product_of(ordered, StepKind.IPL),
        mitigated_frequency=mitigated,
        tolerable_frequency=tolerable,
        ratio=to_float(ratio),
        gap_orders=log10_exact(ratio) if ratio > 0 else -math.inf,
        required_rrf=target.required_rrf,
        meets_target=target.status is SilStatus.NONE_NEEDED,
        sil_target=target,
        ladder=_ladder(ordered),
        demand=demand,
    )
