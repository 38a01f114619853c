"""Checks on human steps: one crew relied on twice, a per-opportunity error chance entered as a
per-year frequency, and the time an operator has against the time needed. They warn only."""

from __future__ import annotations

from collections.abc import Callable, Sequence

from app.likelihood import sources
from app.likelihood.check_base import (
    CauseType,
    CheckedStep,
    CheckWarning,
    credited_ipls,
    initiating_events,
    warn,
)
from app.likelihood.types import IplType, StepKind
from app.likelihood.validation import at_most

__all__ = ["HUMAN_RULES", "is_human_step", "per_year_from_opportunities"]

OPERATOR_MINUTES_FLOOR = 10.0
_PER_OPPORTUNITY_KEY = "operator_routine_error"
_PRODUCT_REL_TOL = 0.01  # the entered frequency may round the product to two figures


def is_human_step(step: CheckedStep) -> bool:
    """An operator response layer, or an initiating event that is a human error."""
    if step.kind == StepKind.IPL:
        return step.ipl_type is IplType.OPERATOR_RESPONSE
    return step.kind == StepKind.INITIATING_EVENT and (
        step.cause_type is CauseType.HUMAN_ERROR or step.typical_key == _PER_OPPORTUNITY_KEY
    )


def _crew(step: CheckedStep) -> str:
    return step.crew.strip().casefold()  # no crew named: taken as the same crew


def _same_crew(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    human = [s for s in steps if is_human_step(s) and (s.kind != StepKind.IPL or s.credited)]
    warnings = []
    for i, step in enumerate(human):
        earlier = next((e for e in human[:i] if _crew(e) == _crew(step)), None)
        if earlier is None or step.kind != StepKind.IPL:
            continue
        crew = f"crew '{step.crew.strip()}'" if _crew(step) else "the same crew (none named)"
        warnings.append(warn(
            "same_crew", step,
            f"relies on {crew}, as '{earlier.label}' does; one crew's error is not independent "
            f"of its own response. Credit one, or name different crews.",
            sources.NO_SOURCE))
    return warnings


def per_year_from_opportunities(probability_per_opportunity: float, per_year: float) -> float:
    """Frequency per year of an error made with a given chance at each of n opportunities."""
    return probability_per_opportunity * per_year


def _per_opportunity(step: CheckedStep) -> CheckWarning | None:
    chance = step.per_opportunity_probability
    if chance is None and step.typical_key != _PER_OPPORTUNITY_KEY:
        return None
    if step.opportunities_per_year is None:
        return warn("per_opportunity_count", step,
                    "a chance per opportunity is not a frequency per year: give the number "
                    "of opportunities a year so the two can be multiplied.",
                    sources.HSE_PSLG_2009_APP_2)
    chance = step.value if chance is None else chance
    product = per_year_from_opportunities(chance, step.opportunities_per_year)
    if at_most(abs(step.value - product), _PRODUCT_REL_TOL * product):
        return None
    return warn("per_opportunity_product", step,
                f"{chance:g} per opportunity x {step.opportunities_per_year:g} opportunities a "
                f"year is {product:.3g} per year, but {step.value:g} per year is entered.",
                sources.HSE_PSLG_2009_APP_2)


def _per_opportunity_rules(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    found = (_per_opportunity(s) for s in initiating_events(steps))
    return [warning for warning in found if warning is not None]


def _time_problem(available: float, needed: float | None) -> tuple[str, str] | None:
    if available < OPERATOR_MINUTES_FLOOR:
        return "operator_time", (f"{available:g} min available; an operator response needs "
                                 f"at least {OPERATOR_MINUTES_FLOOR:g} minutes available.")
    if needed is None:
        return "operator_time_needed", ("give the time needed to detect the alarm and act, "
                                        f"to compare with the {available:g} min available.")
    if needed >= available:
        return "operator_time_margin", (f"detecting and acting take {needed:g} min of the "
                                        f"{available:g} min available; no time is left.")
    return None


def _response_time(steps: Sequence[CheckedStep]) -> list[CheckWarning]:
    warnings = []
    for s in credited_ipls(steps, IplType.OPERATOR_RESPONSE):
        if s.time_available_minutes is None:
            continue  # judged by the older single-time rule in checks.py
        problem = _time_problem(s.time_available_minutes, s.time_to_detect_and_act_minutes)
        if problem is not None:
            warnings.append(warn(problem[0], s, problem[1], sources.CCPS_2001_CH6))
    return warnings


HUMAN_RULES: tuple[Callable[[Sequence[CheckedStep]], list[CheckWarning]], ...] = (
    _same_crew,
    _per_opportunity_rules,
    _response_time,
)
