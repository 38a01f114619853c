"""The proof-test calculator's inputs as typed, read into SifInputs with an error per field."""

from collections.abc import Callable
from dataclasses import dataclass, fields, replace
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
    proof_test_coverage: str = ""
    mission_time_years: str = ""
    sensors_architecture: str = "1oo1"
    sensors_lambda_du: str = ""
    sensors_lambda_dd: str = ""
    logic_architecture: str = "1oo1"
    logic_lambda_du: str = ""
    logic_lambda_dd: str = ""

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
    "proof_test_coverage": lambda f: _fraction(f.proof_test_coverage, "proof_test_coverage",
                                               "Proof-test coverage"),
    "mission_time_hours": lambda f: _years(f.mission_time_years),
}


def _years(text: str) -> float | None:
    years = _hours(text, "mission_time_years", "Mission time")
    return None if years is None else years * HOURS_PER_YEAR
# SifInputs names the interval field by its number of hours; the form field holds the number.
_FORM_FIELD = {"proof_test_interval_hours": "interval_value",
               "mission_time_hours": "mission_time_years"}


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
    if values["proof_test_coverage"] is None:
        values["proof_test_coverage"] = 1.0
    try:
        inputs = SifInputs(architecture=_architecture(form.architecture), **values)
    except LikelihoodInputError as err:
        field = _FORM_FIELD.get(err.step, err.step or "architecture")
        return None, target, {field: _named(err, field)}
    return inputs, target, {}


_LABELS = {"lambda_du": "λDU", "lambda_dd": "λDD", "beta": "β", "beta_d": "βD",
           "interval_value": "Proof-test interval", "mttr_hours": "MTTR", "mrt_hours": "MRT",
           "architecture": "Architecture", "proof_test_coverage": "Proof-test coverage",
           "mission_time_years": "Mission time"}

SUBSYSTEM_FIELDS = {"sensors": ("sensors_architecture", "sensors_lambda_du",
                                "sensors_lambda_dd"),
                    "logic_solver": ("logic_architecture", "logic_lambda_du", "logic_lambda_dd")}
"""The form fields of the sensors and the logic solver; the main fields are the final
elements. A subsystem with a blank λDU is not given (the function is its other parts)."""


def read_subsystems(form: ProofTestForm, final: SifInputs
                    ) -> tuple[dict[str, SifInputs], dict[str, str]]:
    """Each given subsystem's inputs (testing, repair and common cause as the final
    elements'), keyed by role, or the error of each bad field."""
    found, errors = {"final_elements": final}, {}
    for role, (arch_field, du_field, dd_field) in SUBSYSTEM_FIELDS.items():
        if not getattr(form, du_field):
            continue
        try:
            found[role] = replace(
                final, architecture=_architecture(getattr(form, arch_field)),
                lambda_du=_rate(getattr(form, du_field), du_field, "λDU", blank_is_zero=False),
                lambda_dd=_rate(getattr(form, dd_field), dd_field, "λDD", blank_is_zero=True))
        except LikelihoodInputError as err:
            field = err.step if err.step in (du_field, dd_field) else du_field
            errors[field] = err.message
    return found, errors


def _named(err: LikelihoodInputError, field: str) -> str:
    """The rule's sentence with the field's display name in front, not its code name."""
    sentence = err.message.split(": ", 1)[1] if ": " in err.message else err.message
    return f"{_LABELS.get(field, field)}: {sentence}"


def _architecture(text: str) -> Architecture:
    if text in tuple(Architecture):
        return Architecture(text)
    raise input_error("architecture", f"unknown architecture '{text}' (known: "
                      f"{', '.join(Architecture)}).", label="architecture")
