"""Numbers as people say them: 0.01, 1e-2, 1/100, 1 in 100, 1%, 3 in 30 years, 1e-5 per hour.

Parsing returns the value with a plain restatement, so a person sees at once what was read.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from app.likelihood.types import LikelihoodInputError, input_error
from app.likelihood.units import per_year
from app.likelihood.validation import validate_frequency, validate_probability


@dataclass(frozen=True)
class ParsedNumber:
    """A number read from text: its value, the text as typed (stripped) and a plain restatement."""

    value: float
    text: str
    plain: str


_WORDS = {
    "once": 1, "twice": 2, "one": 1, "two": 2, "three": 3, "four": 4, "five": 5,
    "six": 6, "seven": 7, "eight": 8, "nine": 9, "ten": 10,
}  # fmt: skip
_DECIMAL = r"[+-]?(?:\d{1,3}(?:,\d{3})+|\d+)(?:\.\d*)?|[+-]?\.\d+"
_POWER = r"\s*[x*]\s*10\s*\^\s*[+-]?\d+"
_N = rf"((?:{_DECIMAL})(?:e[+-]?\d+|{_POWER})?|10\s*\^\s*[+-]?\d+|{'|'.join(_WORDS)})"

# Events per unit of time, turned to events per year by the spans defined once in units.py.
_UNITS: dict[str, tuple[str, float]] = {
    **dict.fromkeys(("years", "year", "yrs", "yr", "y", "annum"), ("year", per_year("year"))),
    **dict.fromkeys(("months", "month", "mo"), ("month", per_year("month"))),
    **dict.fromkeys(("weeks", "week", "wks", "wk"), ("week", per_year("week"))),
    **dict.fromkeys(("days", "day", "d"), ("day", per_year("day"))),
    **dict.fromkeys(("hours", "hour", "hrs", "hr", "h"), ("hour", per_year("hour"))),
}
_UNIT = rf"({'|'.join(sorted(_UNITS, key=len, reverse=True))})"
_TIMES = r"(?:\s+times?)?"

_PERCENT = re.compile(rf"{_N}\s*(?:%|percent|per\s+cent)")
_RATIO = re.compile(rf"{_N}(?:\s*/\s*|\s+in\s+|\s+out\s+of\s+){_N}")
_PLAIN = re.compile(_N)
_PER_UNIT = re.compile(rf"{_N}{_TIMES}(?:\s*/\s*|\s+(?:per|a|an|every|each)\s+){_UNIT}")
_IN_SPAN = re.compile(rf"{_N}{_TIMES}\s+(?:in|every|per)\s+{_N}\s*{_UNIT}")
_IN_YEARS = re.compile(rf"{_N}(?:\s*/\s*|\s+in\s+){_N}")

_PROBABILITY_FORMS = "write 0.01, 1e-2, 1/100, 1 in 100 or 1%"
_FREQUENCY_FORMS = (
    "write 0.1 (per year), 1e-2, 1/100, 3 in 30 years, once in 50 years, 0.1/yr, "
    "2 per year, once a month or 1e-5 per hour"
)


def format_number(x: float) -> str:
    """Scientific notation with two significant figures: 0.01 -> "1.0e-2"."""
    if x == 0 or not math.isfinite(x):
        return f"{x:g}"
    mantissa, exponent = f"{x:.1e}".split("e")
    return f"{mantissa}e{int(exponent)}"


def format_orders(x: float) -> str:
    """A gap in orders of magnitude with its sign and one decimal: 1.39 -> "+1.4"."""
    return f"{x:+.1f}"


def format_rrf(x: float) -> str:
    """A risk reduction factor as a whole number with thousands separators: "1,200"."""
    return f"{x:,.0f}"


def format_error_factor(value: float) -> str:
    """An EF to two significant figures, as people say it ("3", "4.1", "32")."""
    return f"{float(f'{value:.2g}'):g}"


def probability_text(probability: float) -> str:
    """P(meets) in percent as people read it: "73 %", "< 1 %", "> 99 %"."""
    percent = probability * 100
    if 0 < percent < 1:
        return "< 1 %"
    if 99 < percent < 100:
        return "> 99 %"
    return f"{percent:.0f} %"


def _say(x: float) -> str:
    """A count or rate as a person would write it, falling back to scientific notation."""
    if x.is_integer() and abs(x) < 1e9:
        return f"{int(x):,}"
    if 1e-3 <= abs(x) < 1e6:
        return f"{x:.6g}"
    return format_number(x)


def _say_rounded(x: float) -> str:
    """x rounded to two significant figures, as a person would write it."""
    return _say(float(f"{x:.2g}"))


def format_one_in(p: float) -> str:
    """A probability as "1 in N", N to two significant figures: 0.001 -> "1 in 1,000"."""
    # A computed probability may lie below the 1e-9 input floor; only (0, 1] is required here.
    if not (math.isfinite(p) and 0 < p <= 1):
        raise input_error(
            "probability_range",
            f"a probability must be above 0 and at most 1 to write as 1 in N (got {p:g}).",
            label="Probability",
        )
    return f"1 in {_say_rounded(1 / p)}"


def _normalise(text: str) -> str:
    # Unicode minus and multiplication signs arrive from pasted documents.
    return " ".join(text.replace("\u2212", "-").replace("\u00d7", "x").lower().split())


def _number(token: str) -> float:
    token = token.replace(" ", "").replace(",", "")
    if token in _WORDS:
        return float(_WORDS[token])
    if "^" in token:  # 1.5x10^-3 or 10^-3
        mantissa, _, power = token.partition("^")
        return float(f"{re.sub(r'[x*]?10$', '', mantissa) or 1}e{power}")
    return float(token)


def _divide(numerator: str, divisor: str, label: str) -> float:
    bottom = _number(divisor)
    if bottom == 0:
        raise input_error(
            "zero_divisor", "the number after 'in' or '/' must not be 0.", label=label
        )
    return _number(numerator) / bottom


# "0,001" or "0,010" read with the comma as a thousands separator would give 1 or 10: a leading
# group of zeros, or a comma not followed by exactly three digits, is a decimal comma.
_DECIMAL_COMMA = re.compile(r"(?<![\d.,])0+,\d|\d,(?!\d{3}(?!\d))")


def _refuse_decimal_comma(said: str, typed: str, label: str) -> None:
    if _DECIMAL_COMMA.search(said):
        raise input_error(
            "decimal_comma",
            f"use a dot for decimals: write 0.001, not 0,001 (got '{typed}').",
            label=label,
        )


def _required(label: str, forms: str) -> LikelihoodInputError:
    return input_error("required", f"a value is required: {forms}.", label=label)


def _not_a_number(text: str, label: str, forms: str) -> LikelihoodInputError:
    return input_error("not_a_number", f"not a number: {forms} (got '{text}').", label=label)


def _probability_value(said: str, label: str) -> float | None:
    if match := _PERCENT.fullmatch(said):
        return _number(match[1]) / 100
    if match := _RATIO.fullmatch(said):
        return _divide(match[1], match[2], label)
    if match := _PLAIN.fullmatch(said):
        return _number(match[1])
    return None


def parse_probability(text: str, label: str = "") -> ParsedNumber:
    """Read a probability written as 0.01, 1e-2, 1/100, 1 in 100, 1%, 10 % or .5."""
    typed = text.strip()
    if not typed:
        raise _required(label, _PROBABILITY_FORMS)
    said = _normalise(typed)
    _refuse_decimal_comma(said, typed, label)
    value = _probability_value(said, label)
    if value is None:
        raise _not_a_number(typed, label, _PROBABILITY_FORMS)
    value = validate_probability(value, label)
    return ParsedNumber(value, typed, f"{format_one_in(value)} · {format_number(value)}")


def _once_in(per_year: float) -> str:
    if per_year < 1:
        return f"once in {_say_rounded(1 / per_year)} years"
    return f"{_say(per_year)} per year"


def _count_in(count: float, span: float, unit: str) -> str:
    said = "once" if count == 1 else _say(count)
    return f"{said} in {_say(span)} {unit}{'' if span == 1 else 's'}"


def _count_per(count: float, unit: str) -> str:
    return f"once a {unit}" if count == 1 else f"{_say(count)} per {unit}"


def _frequency_value(said: str, label: str) -> tuple[float, str] | None:
    """Events per year and words restating them ("" for a bare number), or None if unknown."""
    if match := _PER_UNIT.fullmatch(said):
        unit, per_year = _UNITS[match[2]]
        count = _number(match[1])
        return count * per_year, _count_per(count, unit)
    if match := _IN_SPAN.fullmatch(said):
        unit, per_year = _UNITS[match[3]]
        count, span = _number(match[1]), _number(match[2])
        rate = _divide(match[1], match[2], label) * per_year
        return rate, _count_in(count, span, unit)
    if match := _IN_YEARS.fullmatch(said):
        rate = _divide(match[1], match[2], label)
        return rate, _count_in(_number(match[1]), _number(match[2]), "year")
    if match := _PLAIN.fullmatch(said):
        return _number(match[1]), ""
    return None


def parse_frequency(text: str, label: str = "") -> ParsedNumber:
    """Read a frequency per year: 0.1, 1/100, 3 in 30 years, once a month, 1e-5 per hour..."""
    typed = text.strip()
    if not typed:
        raise _required(label, _FREQUENCY_FORMS)
    said = _normalise(typed)
    _refuse_decimal_comma(said, typed, label)
    found = _frequency_value(said, label)
    if found is None:
        raise _not_a_number(typed, label, _FREQUENCY_FORMS)
    value = validate_frequency(found[0], label)
    said = found[1] or _once_in(value)
    return ParsedNumber(value, typed, f"{said} · {format_number(value)} per year")
