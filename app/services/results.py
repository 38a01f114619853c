"""Turn stored scenarios into likelihood inputs and computed results."""

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from functools import lru_cache

from app.db.models import Scenario, SeverityCategory, Step
from app.likelihood.frequency import compute_scenario
from app.likelihood.types import LikelihoodInputError, ScenarioResult, StepInput, StepKind


@dataclass(frozen=True)
class ScenarioOutcome:
    """A scenario's result, or the reason it could not be computed."""

    result: ScenarioResult | None
    governing_category: SeverityCategory | None
    error: str = ""


def governing_category(
    scenario: Scenario, categories: Mapping[int, SeverityCategory]
) -> SeverityCategory | None:
    """The most demanding (lowest tolerable frequency) of the scenario's severity ratings."""
    rated = [
        categories[category_id]
        for category_id in (scenario.severity_category_id, scenario.environment_category_id,
                            scenario.asset_category_id)
        if category_id is not None and category_id in categories
    ]
    return min(rated, key=lambda c: c.tolerable_frequency, default=None)


def step_inputs(steps: Iterable[Step]) -> list[StepInput]:
    """Stored steps as pure likelihood inputs, in their stored order."""
    ordered = sorted(steps, key=lambda s: (s.position, s.id or 0))
    return [
        StepInput(kind=StepKind(str(s.kind)), value=s.value, label=s.description,
                  credited=s.credited)
        for s in ordered
    ]


# The arithmetic is pure, so results are cached on their inputs: a page that shows a whole
# study recomputes only the scenarios whose numbers changed since the last view.
@lru_cache(maxsize=65_536)
def compute_cached(steps: tuple[StepInput, ...], tolerable_frequency: float) -> ScenarioResult:
    """compute_scenario, remembered for identical inputs."""
    return compute_scenario(steps, tolerable_frequency)


def compute_outcome(
    scenario: Scenario, steps: Iterable[Step], categories: Mapping[int, SeverityCategory]
) -> ScenarioOutcome:
    """Compute one scenario against its governing tolerable frequency."""
    category = governing_category(scenario, categories)
    if category is None:
        return ScenarioOutcome(None, None, "no severity category: no target to compare with")
    try:
        result = compute_cached(tuple(step_inputs(steps)), category.tolerable_frequency)
    except LikelihoodInputError as err:
        return ScenarioOutcome(None, category, err.message)
    return ScenarioOutcome(result, category)
