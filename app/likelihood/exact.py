"""Exact arithmetic on numbers as typed: each float is read as its shortest decimal.

0.1 x 0.1 x 0.5 x 0.5 x 0.01 x 0.1 is then exactly 2.5e-6, the order of factors never changes
a result, and a band edge is hit on the nose. Every float's shortest decimal rounds back to
it, and the reading keeps order, so a factor at most 1 can never raise a product.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from fractions import Fraction
from functools import lru_cache


@lru_cache(maxsize=4096)
def as_decimal(value: float) -> Fraction:
    """The finite float as the exact value of its shortest decimal form (0.1 -> 1/10).

    Remembered (a Fraction is immutable): a study uses few distinct values, and parsing the
    text was a third of computing a large study from scratch."""
    return Fraction(repr(float(value)))


def exact_product(values: Iterable[float]) -> Fraction:
    """Exact product of the values read as decimals (1 for no values)."""
    # Exact, so the order of the factors cannot matter: sorted, the same factors in any
    # order are remembered once (a study repeats a few products over thousands of scenarios).
    return _product_of_sorted(tuple(sorted(map(float, values))))


@lru_cache(maxsize=65_536)
def _product_of_sorted(values: tuple[float, ...]) -> Fraction:
    return math.prod((as_decimal(value) for value in values), start=Fraction(1))


def to_float(value: Fraction) -> float:
    """Round an exact value once to the nearest float (inf beyond the float range)."""
    try:
        return float(value)
    except OverflowError:
        return math.inf


@lru_cache(maxsize=65_536)
def exact_ratio(numerator: float, denominator: float) -> Fraction:
    """numerator / denominator, both read as decimals, exactly (denominator must not be 0)."""
    return as_decimal(numerator) / as_decimal(denominator)


def log10_exact(value: Fraction) -> float:
    """log10 of a positive exact value, finite even when the value is below the float range."""
    return math.log10(value.numerator) - math.log10(value.denominator)
