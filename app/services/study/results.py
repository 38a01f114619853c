"""Turn stored scenarios into likelihood inputs and computed results."""

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from functools import lru_cache
from typing import Protocol, TypeVar

from app.db.models import Scenario, SeverityCategory, Step
from app.likelihood.frequency import compute_scenario
from app.likelihood.types import LikelihoodInputError, ScenarioResult, StepInput, StepKind

NO_CATEGORY = "no severity category: no target to compare with"


class RatedScenario(Protocol):
    """What the governing-category rule reads of a scenario (an ORM row or a plain row)."""

    @property
    def severity_category_id(self) -> int | None: ...
    @property
    def environment_category_id(self) -> int | None: ...
    @property
    def asset_category_id(self) -> int | None: ...


class RatedCategory(Protocol):
    """What the governing-category rule reads of a severity category."""

    @property
    def tolerable_frequency(self) -> float: ...


class StoredStep(Protocol):
    """What the arithmetic reads of a stored step (an ORM row or a plain row)."""

    @property
    def id(self) -> int | None: ...
    @property
    def position(self) -> int: ...
    @property
    def kind(self) -> StepKind: ...
    @property
    def value(self) -> float: ...
    @property
    def description(self) -> str: ...
    @property
    def credited(self) -> bool: ...


Category = TypeVar("Category", bound=RatedCategory)


@dataclass(frozen=True)
class ScenarioOutcome:
    """A scenario's result, or the reason it could not be computed."""

    result: ScenarioResult | None
    governing_category: SeverityCategory | None
    error: str = ""


def governing_category(
    scenario: RatedScenario, categories: Mapping[int, Category]
) -> Category | None:
    """The most demanding (lowest tolerable frequency) of the scenario's severity ratings."""
    rated = [
        categories[category_id]
        for category_id in (scenario.severity_category_id, scenario.environment_category_id,
                            scenario.asset_category_id)
        if category_id is not None and category_id in categories
    ]
    return min(rated, key=lambda c: c.tolerable_frequency, default=None)


def step_inputs(steps: Iterable[StoredStep]) -> list[StepInput]:
    """Stored steps as pure likelihood inputs, in their stored order."""
    ordered = sorted(steps, key=lambda s: (s.position, s.id or 0))
    return [
        StepInput(kind=s.kind, value=s.value, label=s.description,
                  credited=s.credited)
        for s in ordered
    ]


# The arithmetic is pure, so results are cached on their inputs: a page that shows a whole
# study recomputes only the scenarios whose numbers changed since the last view.
@lru_cache(maxsize=65_536)
def compute_cached(steps: tuple[StepInput, ...], tolerable_frequency: float) -> ScenarioResult:
    """compute_scenario, remembered for identical inputs."""
    return compute_scenario(steps, tolerable_frequency)


def result_against(
    steps: Iterable[StoredStep], tolerable_frequency: float
) -> tuple[ScenarioResult | None, str]:
    """The scenario's result against a tolerable frequency, or None and the rule its steps break."""
    try:
        return compute_cached(tuple(step_inputs(steps)), tolerable_frequency), ""
    except LikelihoodInputError as err:
        return None, err.message


# Whole-study totals are recomputed after every keystroke. Plain rows read from the database
# are hashable, so an unchanged scenario costs one lookup here instead of rebuilding its inputs
# for compute_cached (the rows carry step ids, so two scenarios never share an entry).
result_of_rows = lru_cache(maxsize=65_536)(result_against)


def compute_outcome(
    scenario: Scenario, steps: Iterable[Step], categories: Mapping[int, SeverityCategory]
) -> ScenarioOutcome:
    """Compute one scenario against its governing tolerable frequency."""
    category = governing_category(scenario, categories)
    if category is None:
        return ScenarioOutcome(None, None, NO_CATEGORY)
    result, error = result_against(steps, category.tolerable_frequency)
    return ScenarioOutcome(result, category, error)
