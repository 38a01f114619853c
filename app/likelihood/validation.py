"""The input rules every likelihood number must pass; messages name the rule and the step."""

from __future__ import annotations

import math

from app.likelihood.types import StepKind, input_error

REL_TOL = 1e-9
"""Relative tolerance for band edges: products of decimals land a hair off an edge."""


def at_most(value: float, edge: float) -> bool:
    """True when value <= edge, counting a value a hair above the edge as on it."""
    return value <= edge * (1 + REL_TOL)


def at_least(value: float, edge: float) -> bool:
    """True when value >= edge, counting a value a hair below the edge as on it."""
    return value >= edge * (1 - REL_TOL)


FREQUENCY_MIN_PER_YEAR = 1e-9
FREQUENCY_MAX_PER_YEAR = 1e4
PROBABILITY_MIN = 1e-9
PROBABILITY_MAX = 1.0
"""What a LOPA number can mean: below 1e-9 is beyond any credible claim, above 1e4 a year is more
than once an hour. Within these bounds no product of a scenario's factors underflows to 0 or
overflows to infinity, so no page takes log(0) or writes "inf" (common practice, no source)."""


def validate_probability(value: float, label: str = "", *, kind: StepKind | None = None) -> float:
    """Return value as a float if it is a probability from 1e-9 to 1; else raise."""
    if not (math.isfinite(value) and 0 < value <= PROBABILITY_MAX):
        sentence = f"a probability must be greater than 0 and at most 1 (got {value:g})."
        raise input_error("probability_range", sentence, label=label, kind=kind)
    if value < PROBABILITY_MIN:
        sentence = (
            f"a probability or PFD must be at least {PROBABILITY_MIN:g}; a smaller one is "
            f"beyond what LOPA can mean (got {value:g})."
        )
        raise input_error("probability_range", sentence, label=label, kind=kind)
    return float(value)


def validate_frequency(value: float, label: str = "", *, kind: StepKind | None = None) -> float:
    """Return value as a float if it is a frequency from 1e-9 to 1e4 per year; else raise."""
    if not (math.isfinite(value) and value > 0):
        sentence = (
            f"a frequency must be a finite number of events per year above 0 (got {value:g})."
        )
        raise input_error("frequency_positive", sentence, label=label, kind=kind)
    if not FREQUENCY_MIN_PER_YEAR <= value <= FREQUENCY_MAX_PER_YEAR:
        sentence = (
            f"a frequency must be from {FREQUENCY_MIN_PER_YEAR:g} to "
            f"{FREQUENCY_MAX_PER_YEAR:g} events per year (got {value:g})."
        )
        raise input_error("frequency_range", sentence, label=label, kind=kind)
    return float(value)


def validate_years(value: float, label: str = "Years") -> float:
    """Return value as a float if it is a finite time span in years above 0; else raise."""
    if not (math.isfinite(value) and value > 0):
        raise input_error(
            "years_positive",
            f"a time span must be a finite number of years above 0 (got {value:g}).",
            label=label,
        )
    return float(value)
