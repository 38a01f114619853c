"""What the IPL checks read (CheckedStep) and write (CheckWarning), shared by every rule module."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from enum import StrEnum

from app.likelihood.sources import Citation
from app.likelihood.types import (
    IplType,
    ModifierKind,
    Receptor,
    StepInput,
    StepKind,
    describe_step,
)


class CauseType(StrEnum):
    """What kind of failure an initiating event is; some rules treat BPCS and human causes apart."""

    BPCS_FAILURE = "bpcs_failure"
    HUMAN_ERROR = "human_error"
    EQUIPMENT_FAILURE = "equipment_failure"
    EXTERNAL_EVENT = "external_event"
    OTHER = "other"


@dataclass(frozen=True)
class CheckedStep:
    """A step with what the checks need to know about the layer or cause behind it.

    Every field after `credited` has a default, so callers that know less still get the checks
    that need less. Times are minutes; opportunities are counts per year.
    """

    kind: StepKind
    value: float
    label: str = ""
    credited: bool = True
    ipl_type: IplType | None = None
    system_tag: str = ""
    response_time_minutes: float | None = None
    sil_claimed: int | None = None
    typical_key: str | None = None
    cause_system_tag: str = ""
    acts_after_sif: bool = False
    modifier_kind: ModifierKind | None = None
    receptors: frozenset[Receptor] | None = None
    cause_type: CauseType | None = None
    final_element_tag: str = ""
    alarm_on_bpcs: bool | None = None
    crew: str = ""
    per_opportunity_probability: float | None = None
    opportunities_per_year: float | None = None
    time_available_minutes: float | None = None
    time_to_detect_and_act_minutes: float | None = None

    def to_step_input(self) -> StepInput:
        """The part of this step that the frequency arithmetic uses."""
        return StepInput(
            self.kind, self.value, self.label, self.credited,
            acts_after_sif=self.acts_after_sif,
            modifier_kind=self.modifier_kind,
            receptors=self.receptors,
        )


@dataclass(frozen=True)
class CheckWarning:
    """One warning: the rule, the step it is about, a sentence saying why, and its source.

    source: the older one-string form kept for current pages. citation / verify_against_copy:
    document, edition and clause or table, and whether the value still needs checking against
    the published text. step_index: the step's position in the list checked.
    withdraws_credit: the warning doubts a credited IPL, so the figures "with flagged credits
    withdrawn" take that layer's PFD as 1.
    """

    rule: str
    step_label: str
    message: str
    source: str
    citation: str = ""
    verify_against_copy: bool = False
    step_index: int | None = None
    withdraws_credit: bool = False
    step: CheckedStep | None = field(default=None, compare=False, repr=False)


def warn(rule: str, step: CheckedStep, sentence: str, cite: Citation,
         source: str | None = None) -> CheckWarning:
    """A warning whose message starts with the step it is about."""
    subject = describe_step(step.kind, step.label)
    return CheckWarning(
        rule, step.label, f"{subject}: {sentence}",
        source=cite.text if source is None else source,
        citation=cite.text,
        verify_against_copy=cite.verify_against_copy,
        withdraws_credit=step.kind == StepKind.IPL and step.credited,
        step=step,
    )


def same_tag(a: str, b: str) -> bool:
    """Tags compare without case or surrounding spaces."""
    return a.strip().casefold() == b.strip().casefold()


def credited_ipls(
    steps: Sequence[CheckedStep], ipl_type: IplType | None = None
) -> list[CheckedStep]:
    """The credited IPL steps, of one type when given."""
    return [
        s for s in steps
        if s.kind == StepKind.IPL and s.credited and ipl_type in (None, s.ipl_type)
    ]


def initiating_events(steps: Sequence[CheckedStep]) -> list[CheckedStep]:
    """The initiating-event steps."""
    return [s for s in steps if s.kind == StepKind.INITIATING_EVENT]
