"""The one rule for incomplete scenarios, for every page, total and export that computes.

A scenario is incomplete while its initiating event has no frequency or it has no severity
(app/likelihood/completeness.py says why). Stored rows and plain rows both answer here, so
the worksheet, the totals, the risk picture and the exports leave out the same scenarios.
"""

from collections.abc import Iterable
from typing import Protocol

from app.likelihood.completeness import missing_inputs
from app.likelihood.types import StepKind


class CompletableScenario(Protocol):
    """What the rule reads of a scenario (an ORM row or a plain row)."""

    @property
    def severity_category_id(self) -> int | None: ...
    @property
    def environment_category_id(self) -> int | None: ...
    @property
    def asset_category_id(self) -> int | None: ...
    @property
    def people_not_rated(self) -> bool: ...


class ValuedStep(Protocol):
    """What the rule reads of a step."""

    @property
    def kind(self) -> StepKind: ...
    @property
    def value(self) -> float | None: ...


def severity_given(scenario: CompletableScenario) -> bool:
    """The main severity is given, or the team said people are not rated (then the
    environment and asset ratings decide, and none at all is a rule broken, not a gap)."""
    return scenario.severity_category_id is not None or bool(scenario.people_not_rated)


def initiating_frequency_given(steps: Iterable[ValuedStep]) -> bool:
    """No initiating event holds an empty value. A scenario without any initiating event
    breaks the one-event rule, which the arithmetic reports; that is not "incomplete"."""
    return all(s.value is not None for s in steps if s.kind == StepKind.INITIATING_EVENT)


def missing_of(scenario: CompletableScenario, steps: Iterable[ValuedStep]) -> tuple[str, ...]:
    """What the scenario still needs before it has figures (empty when complete)."""
    return missing_inputs(initiating_frequency_given=initiating_frequency_given(steps),
                          severity_given=severity_given(scenario))


def is_incomplete(scenario: CompletableScenario, steps: Iterable[ValuedStep]) -> bool:
    """True while the scenario has no initiating frequency or no severity: left out of
    rankings, sums and SIL counts."""
    return bool(missing_of(scenario, steps))
