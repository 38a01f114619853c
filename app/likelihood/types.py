"""Value types shared by the likelihood modules, and the one input error they raise."""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # demand.py builds on these types; the name is needed for the annotation only
    from app.likelihood.demand import SifDemand


class StepKind(StrEnum):
    """The four kinds of factor in a LOPA scenario, in ladder order (the order they multiply in).

    The one vocabulary of step kinds: the value stored in the database and the study file, and
    through `terms` every word the app shows for it.
    """

    INITIATING_EVENT = "initiating_event"
    ENABLING_CONDITION = "enabling_condition"
    CONDITIONAL_MODIFIER = "conditional_modifier"
    IPL = "ipl"

    @property
    def terms(self) -> StepKindTerms:
        """The words for this kind (label, short code, words in a sentence, room word)."""
        return STEP_KIND_TERMS[self]

    @property
    def label(self) -> str:
        """As a heading or a column value: "Initiating event"."""
        return self.terms.label

    @property
    def short(self) -> str:
        """The short code on worksheet tags and ladder marks: "IE"."""
        return self.terms.short

    @property
    def words(self) -> str:
        """Inside a sentence and on its add button: "enabling condition"."""
        return self.terms.words

    @property
    def order(self) -> int:
        """Its place in the ladder (0 for the initiating event)."""
        return tuple(StepKind).index(self)

    @property
    def is_addable(self) -> bool:
        """A scenario gets its one initiating event when created; the other kinds are added."""
        return self is not StepKind.INITIATING_EVENT


@dataclass(frozen=True)
class StepKindTerms:
    """What people call one step kind in each place it is shown."""

    label: str
    short: str
    words: str
    room: str  # the room view's narrow first column


STEP_KIND_TERMS: dict[StepKind, StepKindTerms] = {
    StepKind.INITIATING_EVENT: StepKindTerms("Initiating event", "IE", "initiating event",
                                             "Initiating event"),
    StepKind.ENABLING_CONDITION: StepKindTerms("Enabling condition", "EC", "enabling condition",
                                               "Enabling"),
    StepKind.CONDITIONAL_MODIFIER: StepKindTerms("Conditional modifier", "CM",
                                                 "conditional modifier", "Modifier"),
    StepKind.IPL: StepKindTerms("Independent protection layer", "IPL", "IPL", "IPL"),
}
def step_kind_words(stored: str) -> str:
    """A stored kind as words in a sentence ("enabling condition"); unknown text as it is."""
    return StepKind(stored).words if stored in tuple(StepKind) else stored


STEP_KIND_LABELS: dict[StepKind, str] = {kind: terms.label
                                         for kind, terms in STEP_KIND_TERMS.items()}


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
about harm to the environment or an asset; an ignition does (CCPS 2013 concept; recalled)."""


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
