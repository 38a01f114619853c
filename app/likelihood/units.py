"""The one definition of the spans of time every likelihood module uses.

A year is 365 days of 24 hours (8760 h, leap days ignored), a month is a twelfth of that year
(730 h) and a week is 7 days (168 h), so a year holds 8760 / 168 = 52.14 weeks. The number
parser (per week, per month) and the proof-test calculator (intervals in weeks, months, years)
both read these, so "once a week" and "a proof test every week" mean the same span.
"""

from __future__ import annotations

HOURS_PER_DAY = 24
HOURS_PER_WEEK = 7 * HOURS_PER_DAY
HOURS_PER_YEAR = 365 * HOURS_PER_DAY
HOURS_PER_MONTH = HOURS_PER_YEAR / 12

UNIT_HOURS: dict[str, float] = {
    "hour": 1.0,
    "day": float(HOURS_PER_DAY),
    "week": float(HOURS_PER_WEEK),
    "month": HOURS_PER_MONTH,
    "year": float(HOURS_PER_YEAR),
}
"""Hours in each named span, singular names."""


def per_year(unit: str) -> float:
    """How many of this span fit in a year: 'week' -> 52.142857..., 'hour' -> 8760."""
    return HOURS_PER_YEAR / UNIT_HOURS[unit]
