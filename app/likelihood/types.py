"""Value types shared by the likelihood modules, and the one input error they raise."""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # demand.py builds on these types; the name is needed for the annotation only
    from app.likelihood.demand import SifDemand


class StepKind(StrEnum):
    """The four kinds of factor in a LOPA scenario."""

    INITIATING_EVENT = "initiating_event"
    ENABLING_CONDITION = "enabling_condition"
    CONDITIONAL_MODIFIER = "conditional_modifier"
    IPL = "ipl"


STEP_KIND_LABELS: dict[StepKind, str] = {
    StepKind.INITIATING_EVENT: "Initiating event",
    StepKind.ENABLING_CONDITION: "Enabling condition",
    StepKind.CONDITIONAL_MODIFIER: "Conditional modifier",
    StepKind.IPL: "Independent protection layer",
}


class IplType(StrEnum):
    """What kind of protection layer an IPL is; the checks treat some kinds specially."""

    BPCS = "bpcs"
    SIF = "sif"
    OPERATOR_RESPONSE = "operator_response"
    RELIEF_DEVICE = "relief_device"
    PASSIVE = "passive"
    OTHER = "other"


class Receptor(StrEnum):
    """Who or what a consequence harms; each rated receptor has its own tolerable frequency."""

    PEOPLE = "people"
    ENVIRONMENT = "environment"
    ASSET = "asset"


class ModifierKind(StrEnum):
    """What a conditional modifier stands for; it decides the receptors it applies to by default."""

    IGNITION = "ignition"
    PRESENCE = "presence"
    VULNERABILITY = "vulnerability"
    OTHER = "other"


ALL_RECEPTORS: frozenset[Receptor] = frozenset(Receptor)

DEFAULT_MODIFIER_RECEPTORS: dict[ModifierKind, frozenset[Receptor]] = {
    ModifierKind.IGNITION: ALL_RECEPTORS,
    ModifierKind.PRESENCE: frozenset({Receptor.PEOPLE}),
    ModifierKind.VULNERABILITY: frozenset({Receptor.PEOPLE}),
    ModifierKind.OTHER: ALL_RECEPTORS,
}
"""Presence of people and their vulnerability (probability of injury or fatality) say nothing
about harm to the environment or an asset; an ignition does (CCPS 2013 concept; from memory)."""


class LikelihoodInputError(ValueError):
    """Bad input: `rule` names the broken rule, `step` the step or field, `message` says it."""

    def __init__(self, rule: str, step: str, message: str) -> None:
        super().__init__(message)
        self.rule = rule
        self.step = step
        self.message = message


def describe_step(kind: StepKind | None, label: str) -> str:
    """Name a step for a message: "Enabling condition 'Tank filling'", or what is known of it."""
    if kind is not None and label:
        return f"{STEP_KIND_LABELS[kind]} '{label}'"
    if kind is not None:
        return STEP_KIND_LABELS[kind]
    return label


def input_error(
    rule: str, sentence: str, *, label: str = "", kind: StepKind | None = None
) -> LikelihoodInputError:
    """Build a LikelihoodInputError whose message starts with the step it is about."""
    subject = describe_step(kind, label)
    message = f"{subject}: {sentence}" if subject else sentence[:1].upper() + sentence[1:]
    return LikelihoodInputError(rule, label, message)


@dataclass(frozen=True)
class StepInput:
    """One factor of a scenario: frequency per year for the initiating event, else a probability.

    acts_after_sif: an IPL that acts after an added SIF would (a bund, a blast wall, a relief
    device downstream of the trip); it does not reduce the demand on that SIF.
    modifier_kind / receptors: for a conditional modifier, what it stands for and the receptors
    it applies to; receptors None means the default of its kind (see modifier_receptors).
    """

    kind: StepKind
    value: float
    label: str = ""
    credited: bool = True
    acts_after_sif: bool = False
    modifier_kind: ModifierKind | None = None
    receptors: frozenset[Receptor] | None = None


def modifier_receptors(step: StepInput) -> frozenset[Receptor]:
    """The receptors a conditional modifier reduces: as given, else its kind's default.

    A modifier of no stated kind applies to every receptor, as it did before kinds existed;
    the team should say what it stands for.
    """
    if step.receptors is not None:
        return frozenset(step.receptors)
    return DEFAULT_MODIFIER_RECEPTORS[step.modifier_kind or ModifierKind.OTHER]


@dataclass(frozen=True)
class LadderPoint:
    """One rung of the frequency ladder: the factor applied and the running frequency after it."""

    label: str
    kind: StepKind
    factor: float
    frequency_after: float


class SilStatus(StrEnum):
    """What the gap between mitigated and tolerable frequency asks of an added function."""

    NONE_NEEDED = "none_needed"
    BELOW_SIL1 = "below_sil1"
    SIL = "sil"
    BEYOND_ONE_FUNCTION = "beyond_one_function"


class DemandMode(StrEnum):
    """Low demand (at most one demand a year) or high demand / continuous."""

    LOW = "low"
    HIGH = "high"


@dataclass(frozen=True)
class SilTarget:
    """The SIL band an added function would need, with the numbers behind it."""

    status: SilStatus
    sil: int | None
    demand_mode: DemandMode
    required_rrf: float
    required_pfd: float | None
    required_pfh: float | None
    label: str


@dataclass(frozen=True)
class ScenarioResult:
    """Everything computed for one scenario: products, gap, SIL target and the ladder."""

    initiating_frequency: float
    enabling_product: float
    modifier_product: float
    ipl_product: float
    mitigated_frequency: float
    tolerable_frequency: float
    ratio: float
    gap_orders: float
    required_rrf: float
    meets_target: bool
    sil_target: SilTarget
    ladder: tuple[LadderPoint, ...]
    demand: SifDemand | None = None
    """Demand rate, mode and formula behind sil_target (always set by compute_scenario)."""
