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


def validate_probability(value: float, label: str = "", *, kind: StepKind | None = None) -> float:
    """Return value as a float if it is a finite probability in (0, 1]; else raise."""
    if not (math.isfinite(value) and 0 < value <= 1):
        raise input_error(
            "probability_range",
            f"a probability must be greater than 0 and at most 1 (got {value:g}).",
            label=label,
            kind=kind,
        )
    return float(value)


def validate_frequency(value: float, label: str = "", *, kind: StepKind | None = None) -> float:
    """Return value as a float if it is a finite frequency per year above 0; else raise."""
    if not (math.isfinite(value) and value > 0):
        raise input_error(
            "frequency_positive",
            f"a frequency must be a finite number of events per year above 0 (got {value:g}).",
            label=label,
            kind=kind,
        )
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
