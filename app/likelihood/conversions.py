"""Turning what people know (counts over years, chances over a period) into rates and back.

Events are taken as a Poisson process: P(at least one in T) = 1 - exp(-lambda T).
"""

from __future__ import annotations

import math

from app.likelihood.types import input_error
from app.likelihood.units import HOURS_PER_YEAR
from app.likelihood.validation import validate_frequency, validate_probability, validate_years


def events_per_year(events: float, years: float) -> float:
    """Frequency per year from n events seen in T years: n / T."""
    if not (math.isfinite(events) and events > 0):
        raise input_error(
            "events_positive",
            f"the number of events must be above 0 to give a frequency (got {events:g}).",
            label="Events",
        )
    return events / validate_years(years)


def probability_of_at_least_one(frequency_per_year: float, years: float = 1.0) -> float:
    """Chance of at least one event in T years at a Poisson rate: 1 - exp(-lambda T)."""
    rate = validate_frequency(frequency_per_year, "Frequency")
    return -math.expm1(-rate * validate_years(years))


def frequency_from_probability(probability: float, years: float = 1.0) -> float:
    """Poisson rate per year whose chance of at least one event in T years is P: -ln(1-P)/T."""
    chance = validate_probability(probability, "Probability")
    if chance == 1:
        raise input_error(
            "probability_below_one",
            "a certain event (probability 1) has no finite frequency: give a probability below 1.",
            label="Probability",
        )
    return -math.log1p(-chance) / validate_years(years)


def fraction_of_year(hours_per_year: float) -> float:
    """Share of the year spent in a state (time at risk, occupancy): hours / 8760."""
    if not (math.isfinite(hours_per_year) and 0 < hours_per_year <= HOURS_PER_YEAR):
        raise input_error(
            "hours_in_year",
            f"hours per year must be above 0 and at most {HOURS_PER_YEAR} "
            f"(got {hours_per_year:g}).",
            label="Hours per year",
        )
    return hours_per_year / HOURS_PER_YEAR


def task_error_frequency(tasks_per_year: float, error_probability: float) -> float:
    """Frequency of a human error as a cause: tasks per year x error probability per task."""
    tasks = validate_frequency(tasks_per_year, "Tasks per year")
    return tasks * validate_probability(error_probability, "Error probability per task")
