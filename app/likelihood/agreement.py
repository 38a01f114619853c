"""The number a team agrees after a round, and the basis sentence that records how.

"agreed in round 2 from 6 estimates, 1.0e-3 to 1.0e-2, geometric mean 3.2e-3;
J. Doe dissents: vendor data says 1e-4". Numbers use the app's one formatter (format_number).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import StrEnum

from app.likelihood.estimates import RoundStats, validate_estimate
from app.likelihood.numbers import format_number
from app.likelihood.types import input_error


class AgreementMethod(StrEnum):
    """How the agreed value is taken from a round."""

    GEOMETRIC_MEAN = "geometric_mean"
    MEDIAN = "median"
    TYPED = "typed"


AGREEMENT_METHOD_LABELS: dict[AgreementMethod, str] = {
    AgreementMethod.GEOMETRIC_MEAN: "geometric mean",
    AgreementMethod.MEDIAN: "median",
    AgreementMethod.TYPED: "typed value",
}


@dataclass(frozen=True)
class Dissent:
    """One person who does not accept the agreed value, and why (the reason may be empty)."""

    person: str
    reason: str = ""


@dataclass(frozen=True)
class Agreement:
    """A round's outcome: which round, its figures, the method and any dissents.

    `typed_value` is required for the typed method and ignored for the others.
    """

    round_number: int
    stats: RoundStats
    method: AgreementMethod
    typed_value: float | None = None
    dissents: tuple[Dissent, ...] = field(default_factory=tuple)


def agreed_value(agreement: Agreement) -> float:
    """The value the step takes: the geometric mean, the median or the typed value."""
    _check(agreement)
    if agreement.method == AgreementMethod.GEOMETRIC_MEAN:
        return agreement.stats.geometric_mean
    if agreement.method == AgreementMethod.MEDIAN:
        return agreement.stats.median
    assert agreement.typed_value is not None  # _check refused a typed method without a value
    return validate_estimate(agreement.typed_value, agreement.stats.unit, "Agreed value")


def _check(agreement: Agreement) -> None:
    if agreement.round_number < 1:
        raise input_error(
            "round_number",
            f"a round number starts at 1 (got {agreement.round_number}).",
            label="Round",
        )
    if agreement.method == AgreementMethod.TYPED and agreement.typed_value is None:
        raise input_error(
            "typed_value_required",
            "agreeing on a typed value needs the value.",
            label="Agreed value",
        )
    for dissent in agreement.dissents:
        if not dissent.person.strip():
            raise input_error(
                "dissent_person", "a dissent needs the person's name.", label="Dissent"
            )


def _range_words(stats: RoundStats) -> str:
    count = f"{stats.count} estimate{'' if stats.count == 1 else 's'}"
    if stats.lowest == stats.highest:
        return f"{count}, all {format_number(stats.lowest)}"
    return f"{count}, {format_number(stats.lowest)} to {format_number(stats.highest)}"


def _method_words(agreement: Agreement, value: float) -> str:
    stats = agreement.stats
    if agreement.method == AgreementMethod.GEOMETRIC_MEAN:
        return f"geometric mean {format_number(value)}"
    if agreement.method == AgreementMethod.MEDIAN:
        return f"median {format_number(value)}"
    pooled = format_number(stats.geometric_mean)
    return f"typed value {format_number(value)} (geometric mean {pooled})"


def _dissent_words(dissent: Dissent) -> str:
    reason = " ".join(dissent.reason.split())
    person = " ".join(dissent.person.split())
    return f"{person} dissents: {reason}" if reason else f"{person} dissents"


def agreement_basis(agreement: Agreement) -> str:
    """The basis sentence recorded on the step and in the change log."""
    value = agreed_value(agreement)
    sentence = (
        f"agreed in round {agreement.round_number} from {_range_words(agreement.stats)}, "
        f"{_method_words(agreement, value)}"
    )
    return "; ".join([sentence, *map(_dissent_words, agreement.dissents)])
