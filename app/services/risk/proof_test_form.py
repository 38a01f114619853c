"""The proof-test calculator's inputs as typed, read into SifInputs with an error per field."""

from collections.abc import Callable
from dataclasses import dataclass, fields
from typing import Any

from app.likelihood.numbers import parse_probability
from app.likelihood.proof_test import Architecture, SifInputs
from app.likelihood.sil import HOURS_PER_YEAR
from app.likelihood.types import LikelihoodInputError, input_error

# Any in this module: form readers take raw form values (the form boundary).

INTERVAL_UNITS: dict[str, float] = {
    "hours": 1.0, "days": 24.0, "weeks": 168.0,
    "months": HOURS_PER_YEAR / 12, "years": float(HOURS_PER_YEAR),
}
"""Hours per unit of the proof-test interval (a year of 8760 h, a month of 730 h)."""


@dataclass(frozen=True)
class ProofTestForm:
    """The calculator's inputs as typed."""

    architecture: str = "1oo1"
    lambda_du: str = "5e-7"
    lambda_dd: str = "0"
    beta: str = ""
    beta_d: str = ""
    interval_value: str = "1"
    interval_unit: str = "years"
    mttr_hours: str = "8"
    mrt_hours: str = ""
    target_pfd: str = ""

    @classmethod
    def from_mapping(cls, data: Any) -> "ProofTestForm":
        """Pick the calculator's fields out of submitted form data (missing ones blank)."""
        return cls(**{f.name: str(data.get(f.name, "")).strip() for f in fields(cls)})


def _rate(text: str, field: str, label: str, *, blank_is_zero: bool) -> float:
    if not text and blank_is_zero:
        return 0.0
    try:
        return float(text.replace("\u2212", "-").replace(" ", ""))
    except ValueError:
        said = f"got '{text}'" if text else "nothing given"
        raise LikelihoodInputError(
            "not_a_number", field,
            f"{label}: not a number: write a rate per hour such as 5e-7 ({said}).",
        ) from None


def _hours(text: str, field: str, label: str) -> float | None:
    if not text:
        return None
    try:
        return float(text)
    except ValueError:
        raise LikelihoodInputError(
            "not_a_number", field, f"{label}: not a number of hours (got '{text}')."
        ) from None


def _fraction(text: str, field: str, label: str) -> float | None:
    if not text:
        return None
    if text.strip() in {"0", "0%", "0.0"}:
        return 0.0
    try:
        return parse_probability(text, label).value
    except LikelihoodInputError as err:
        raise LikelihoodInputError(err.rule, field, err.message) from None


def _target(text: str) -> float | None:
    if not text:
        return None
    try:
        return parse_probability(text, "Target PFD").value
    except LikelihoodInputError as err:
        raise LikelihoodInputError(err.rule, "target_pfd", err.message) from None


def _interval_hours(form: ProofTestForm) -> float:
    if form.interval_unit not in INTERVAL_UNITS:
        known = ", ".join(INTERVAL_UNITS)
        raise LikelihoodInputError("interval_unit", "interval_value",
                                   f"Proof-test interval: unknown unit '{form.interval_unit}' "
                                   f"(known: {known}).")
    number = _hours(form.interval_value, "interval_value", "Proof-test interval")
    if number is None:
        raise LikelihoodInputError("required", "interval_value",
                                   "Proof-test interval: a value is required, e.g. 1 year.")
    return number * INTERVAL_UNITS[form.interval_unit]


# Each reader returns the field's value (a float, or None when a blank means 'not given').
_READERS: dict[str, Callable[[ProofTestForm], Any]] = {
    "lambda_du": lambda f: _rate(f.lambda_du, "lambda_du", "λDU", blank_is_zero=False),
    "lambda_dd": lambda f: _rate(f.lambda_dd, "lambda_dd", "λDD", blank_is_zero=True),
    "beta": lambda f: _fraction(f.beta, "beta", "β"),
    "beta_d": lambda f: _fraction(f.beta_d, "beta_d", "βD"),
    "proof_test_interval_hours": _interval_hours,
    "mttr_hours": lambda f: _hours(f.mttr_hours, "mttr_hours", "MTTR"),
    "mrt_hours": lambda f: _hours(f.mrt_hours, "mrt_hours", "MRT"),
}
# SifInputs names the interval field by its number of hours; the form field holds the number.
_FORM_FIELD = {"proof_test_interval_hours": "interval_value"}


def read_inputs(form: ProofTestForm) -> tuple[SifInputs | None, float | None, dict[str, str]]:
    """The validated inputs and target PFD, or the error of each field naming its rule."""
    errors: dict[str, str] = {}
    values: dict[str, Any] = {}
    for name, reader in _READERS.items():
        try:
            values[name] = reader(form)
        except LikelihoodInputError as err:
            errors[err.step or name] = err.message
    target = None
    try:
        target = _target(form.target_pfd)
    except LikelihoodInputError as err:
        errors["target_pfd"] = err.message
    if errors:
        return None, target, errors
    if values["mttr_hours"] is None:
        values["mttr_hours"] = 8.0
    try:
        inputs = SifInputs(architecture=_architecture(form.architecture), **values)
    except LikelihoodInputError as err:
        field = _FORM_FIELD.get(err.step, err.step or "architecture")
        return None, target, {field: _named(err, field)}
    return inputs, target, {}


_LABELS = {"lambda_du": "λDU", "lambda_dd": "λDD", "beta": "β", "beta_d": "βD",
           "interval_value": "Proof-test interval", "mttr_hours": "MTTR", "mrt_hours": "MRT",
           "architecture": "Architecture"}


def _named(err: LikelihoodInputError, field: str) -> str:
    """The rule's sentence with the field's display name in front, not its code name."""
    sentence = err.message.split(": ", 1)[1] if ": " in err.message else err.message
    return f"{_LABELS.get(field, field)}: {sentence}"


def _architecture(text: str) -> Architecture:
    if text in tuple(Architecture):
        return Architecture(text)
    raise input_error("architecture", f"unknown architecture '{text}' (known: "
                      f"{', '.join(Architecture)}).", label="architecture")
