"""Turn stored scenarios into likelihood inputs and computed results.

A scenario is assessed per rated receptor (people, environment, asset): each gets its own
mitigated frequency, ratio, gap and SIL target, because a conditional modifier reduces only the
receptors it applies to. The headline (`ScenarioOutcome.result`, its ladder and SIL target) is
the governing receptor's: the one needing the largest risk reduction. Beside the figures as
credited stand the figures with every credit an IPL check doubts withdrawn (PFD taken as 1), so
no headline says "meets target" while the scenario's own checks reject a credit.
"""

from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Protocol, TypeVar

from app.db.models import Scenario, SeverityCategory, Step
from app.likelihood.check_base import CheckedStep, CheckWarning
from app.likelihood.checks import check_scenario
from app.likelihood.completeness import incomplete_words
from app.likelihood.frequency import compute_scenario
from app.likelihood.receptors import ReceptorAssessment, ReceptorLine, assess_receptors
from app.likelihood.types import (
    IplType,
    LikelihoodInputError,
    Receptor,
    ScenarioResult,
    StepInput,
    StepKind,
    modifier_receptors,
)
from app.likelihood.withdrawn import withdraw_flagged_credits
from app.services.study.completeness import CompletableScenario, missing_of
from app.services.study.remembered import remembered
from app.services.study.step_fields import (
    cause_type_of,
    ipl_type_of,
    modifier_kind_of,
    receptor_set,
)

NO_CATEGORY = "no severity category: no target to compare with"
NONE_NEEDED = "none needed"
INCOMPLETE = "incomplete"


class RatedScenario(Protocol):
    """What the receptor rules read of a scenario (an ORM row or a plain row)."""

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
    """What the arithmetic and the IPL checks read of a stored step (ORM row or plain row)."""

    @property
    def id(self) -> int | None: ...
    @property
    def position(self) -> int: ...
    @property
    def kind(self) -> StepKind: ...
    @property
    def value(self) -> float | None: ...
    @property
    def description(self) -> str: ...
    @property
    def credited(self) -> bool: ...


Category = TypeVar("Category", bound=RatedCategory)


@dataclass(frozen=True)
class Figures:
    """One way of crediting a scenario: the governing receptor's result and every line."""

    result: ScenarioResult
    receptors: ReceptorAssessment

    @property
    def governing(self) -> ReceptorLine:
        """The rated receptor needing the largest risk reduction."""
        return self.receptors.governing


@dataclass(frozen=True)
class Assessment:
    """A scenario as credited and, when a check doubts a credit, with those credits withdrawn."""

    as_credited: Figures
    withdrawn: Figures | None
    warnings: tuple[CheckWarning, ...]
    withdrawn_labels: tuple[str, ...]

    @property
    def verdict_changes(self) -> bool:
        """True when withdrawing the flagged credits turns "meets target" into "short"."""
        return (self.withdrawn is not None
                and self.as_credited.result.meets_target != self.withdrawn.result.meets_target)


@dataclass(frozen=True)
class ScenarioOutcome:
    """A scenario's result (the governing receptor's, as credited), or why it has none."""

    result: ScenarioResult | None
    governing_category: SeverityCategory | None
    error: str = ""
    assessment: Assessment | None = None
    rated: tuple[tuple[Receptor, SeverityCategory], ...] = ()
    """Each rated receptor's severity category, in receptor order."""
    missing: tuple[str, ...] = ()
    """What an incomplete scenario still needs (initiating frequency, severity); see
    services/study/completeness.py. An incomplete scenario has no result."""

    @property
    def incomplete(self) -> bool:
        """No initiating frequency or no severity yet: shown as incomplete, left out of sums."""
        return bool(self.missing)

    @property
    def no_figures_words(self) -> str:
        """Why there are no figures, as every page and export says it: 'incomplete: no
        severity yet' or 'not computed: <the rule broken>' ('' when there are figures)."""
        if self.result is not None:
            return ""
        return f"{INCOMPLETE}: {self.error}" if self.incomplete else f"not computed: {self.error}"

    def figures(self, *, withdrawn: bool) -> Figures | None:
        """The figures as credited, or with flagged credits withdrawn where a check flags one."""
        if self.assessment is None:
            return None
        if withdrawn and self.assessment.withdrawn is not None:
            return self.assessment.withdrawn
        return self.assessment.as_credited

    def category_of(self, receptor: Receptor) -> SeverityCategory | None:
        """The severity category a rated receptor is judged against."""
        return dict(self.rated).get(receptor)


def governing_category(
    scenario: RatedScenario, categories: Mapping[int, Category]
) -> Category | None:
    """The strictest (lowest tolerable frequency) of the scenario's severity ratings.

    Used where no arithmetic runs (the criteria page's counts); results use the governing
    receptor, which also weighs the modifiers each receptor gets.
    """
    rated = [
        categories[category_id]
        for category_id in (scenario.severity_category_id, scenario.environment_category_id,
                            scenario.asset_category_id)
        if category_id is not None and category_id in categories
    ]
    return min(rated, key=lambda c: c.tolerable_frequency, default=None)


def receptor_categories(
    scenario: RatedScenario, categories: Mapping[int, Category], *, people_not_rated: bool
) -> dict[Receptor, Category]:
    """Each rated receptor's category.

    The main severity rating counts for the receptor its category names (people unless the
    category says environment or asset), and not at all when people are not rated; the
    environment and asset ratings count for theirs. Two ratings of one receptor: the stricter.
    """
    slots = [(None if people_not_rated else scenario.severity_category_id, None),
             (scenario.environment_category_id, Receptor.ENVIRONMENT),
             (scenario.asset_category_id, Receptor.ASSET)]
    rated: dict[Receptor, Category] = {}
    for category_id, slot_receptor in slots:
        category = categories.get(category_id) if category_id is not None else None
        if category is None:
            continue
        receptor = slot_receptor or _receptor_of(category)
        held = rated.get(receptor)
        if held is None or category.tolerable_frequency < held.tolerable_frequency:
            rated[receptor] = category
    return rated


def _receptor_of(category: RatedCategory) -> Receptor:
    stored = str(getattr(category, "receptor", "") or "")
    return Receptor(stored) if stored in tuple(Receptor) else Receptor.PEOPLE


def _ordered(steps: Iterable[StoredStep]) -> list[StoredStep]:
    return sorted(steps, key=lambda s: (s.position, s.id or 0))


def step_inputs(steps: Iterable[StoredStep]) -> list[StepInput]:
    """Stored steps as pure likelihood inputs, in their stored order."""
    return [s.to_step_input() for s in checked_steps(steps)]


def _ipl_type(stored: str | None) -> IplType | None:
    # An unknown stored type checks as "no type given" rather than failing the page.
    return ipl_type_of(stored)


def checked_step(step: StoredStep, cause_system_tag: str = "") -> CheckedStep:
    """One stored step as the checks and the arithmetic see it."""
    def read(name: str) -> Any:  # Any: an ORM attribute or a plain row's column
        return getattr(step, name, None)

    if step.value is None:  # only an incomplete scenario's initiating event; never computed
        raise LikelihoodInputError("value_missing", step.description,
                                   f"{step.kind.label}: no value given yet.")
    return CheckedStep(
        kind=step.kind, value=step.value, label=step.description, credited=step.credited,
        ipl_type=_ipl_type(read("ipl_type")), system_tag=read("system_tag") or "",
        response_time_minutes=read("response_time_minutes"), sil_claimed=read("sil_claimed"),
        typical_key=read("typical_key"), cause_system_tag=cause_system_tag,
        acts_after_sif=bool(read("acts_after_sif")),
        modifier_kind=modifier_kind_of(read("modifier_kind")),
        receptors=receptor_set(read("receptors")), cause_type=cause_type_of(read("cause_type")),
        final_element_tag=read("final_element_tag") or "", alarm_on_bpcs=read("alarm_on_bpcs"),
        crew=read("crew") or "",
        per_opportunity_probability=read("per_opportunity_probability"),
        opportunities_per_year=read("opportunities_per_year"),
        time_available_minutes=read("time_available_minutes"),
        time_to_detect_and_act_minutes=read("time_to_detect_and_act_minutes"),
    )


def checked_steps(steps: Iterable[StoredStep]) -> list[CheckedStep]:
    """Stored steps in order; the initiating event's system_tag names the cause's system."""
    return [checked_step(s, getattr(s, "system_tag", "") or ""
                         if s.kind == StepKind.INITIATING_EVENT else "")
            for s in _ordered(steps)]


def warnings_of(steps: Iterable[StoredStep]) -> list[CheckWarning]:
    """The IPL-check warnings of a scenario; none while a step has no value yet."""
    listed = list(steps)
    if any(s.value is None for s in listed):
        return []
    return check_scenario(checked_steps(listed))


def steps_for_receptor(steps: Sequence[StepInput], receptor: Receptor) -> list[StepInput]:
    """The steps that reduce this receptor's frequency: modifiers for other receptors left out."""
    return [s for s in steps
            if s.kind != StepKind.CONDITIONAL_MODIFIER or receptor in modifier_receptors(s)]


Targets = tuple[tuple[Receptor, float], ...]


Computer = Callable[[tuple[StepInput, ...], float], ScenarioResult]


def _figures(steps: Sequence[StepInput], targets: Targets,
             compute: Computer) -> Figures:
    receptors = assess_receptors(steps, dict(targets))
    line = receptors.governing
    result = compute(tuple(steps_for_receptor(steps, line.receptor)), line.tolerable_frequency)
    return Figures(result, receptors)


def _assessed(steps: tuple[CheckedStep, ...], targets: Targets,
              compute: Computer) -> Assessment:
    warnings = tuple(check_scenario(steps))
    as_credited = _figures([s.to_step_input() for s in steps], targets, compute)
    flagged = sorted({w.step_index for w in warnings
                      if w.withdraws_credit and w.step_index is not None})
    if not flagged:
        return Assessment(as_credited, None, warnings, ())
    withdrawn = withdraw_flagged_credits(steps, warnings)
    return Assessment(as_credited,
                      _figures([s.to_step_input() for s in withdrawn], targets, compute),
                      warnings, tuple(steps[i].label for i in flagged))


@remembered(maxsize=65_536)
def assess(steps: tuple[CheckedStep, ...], targets: Targets) -> Assessment:
    """The scenario checked, then computed as credited and with flagged credits withdrawn.

    Cached on its inputs (all frozen): a page showing a whole study recomputes only the
    scenarios whose numbers changed. Raises LikelihoodInputError for invalid steps.
    """
    return _assessed(steps, targets, compute_cached)


def assess_fresh(steps: tuple[CheckedStep, ...], targets: Targets) -> Assessment:
    """assess without remembering anything per scenario: a whole study computed once (an
    import, a rebuild) would only fill the caches with entries never asked for again. The
    arithmetic's caches of numbers (labels play no part) still serve it."""
    return _assessed(steps, targets, compute_scenario)


@remembered(maxsize=65_536)
def compute_cached(steps: tuple[StepInput, ...], tolerable_frequency: float) -> ScenarioResult:
    """compute_scenario, remembered for identical inputs."""
    return compute_scenario(steps, tolerable_frequency)


def assessment_of(
    steps: Iterable[StoredStep], targets: Targets
) -> tuple[Assessment | None, str]:
    """The scenario's assessment, or None and the message of the rule its steps break."""
    return _assessment_by(assess, steps, targets)


def assessment_of_fresh(
    steps: Iterable[StoredStep], targets: Targets
) -> tuple[Assessment | None, str]:
    """assessment_of through assess_fresh (nothing remembered per scenario)."""
    return _assessment_by(assess_fresh, steps, targets)


def _assessment_by(
    assessor: Callable[[tuple[CheckedStep, ...], Targets], Assessment],
    steps: Iterable[StoredStep], targets: Targets
) -> tuple[Assessment | None, str]:
    if not targets:
        return None, NO_CATEGORY
    try:
        return assessor(tuple(checked_steps(steps)), targets), ""
    except LikelihoodInputError as err:
        return None, err.message


# Whole-study totals are recomputed after every keystroke. Plain rows read from the database
# are hashable, so an unchanged scenario costs one lookup here instead of rebuilding its inputs
# (the rows carry step ids, so two scenarios never share an entry).
@remembered(maxsize=65_536)
def _assessment_of_row_tuple(steps: tuple[Any, ...], targets: Targets
                             ) -> tuple[Assessment | None, str]:
    return assessment_of(steps, targets)


def assessment_of_rows(steps: Iterable[StoredStep], targets: Targets
                       ) -> tuple[Assessment | None, str]:
    """assessment_of for plain rows, remembered per scenario (rows are hashable)."""
    return _assessment_of_row_tuple(tuple(steps), targets)


Assessor = Callable[[Iterable[StoredStep], Targets], tuple[Assessment | None, str]]


def targets_of(rated: Mapping[Receptor, RatedCategory]) -> Targets:
    """The tolerable frequency of each rated receptor, in receptor order (hashable)."""
    return tuple((r, float(rated[r].tolerable_frequency)) for r in Receptor if r in rated)


def outcome_of(
    scenario: CompletableScenario, steps: Iterable[StoredStep],
    categories: Mapping[int, Category], *, people_not_rated: bool,
    assessed: Assessor,
) -> tuple[Assessment | None, Category | None, str]:
    """Assess a scenario and name the category of its governing receptor.

    An incomplete scenario is never assessed: None, and the words for what it lacks.
    """
    listed = list(steps)
    if missing := missing_of(scenario, listed):
        return None, None, incomplete_words(missing)
    rated = receptor_categories(scenario, categories, people_not_rated=people_not_rated)
    assessment, error = assessed(listed, targets_of(rated))
    if assessment is None:
        return None, None, error
    return assessment, rated[assessment.as_credited.governing.receptor], ""


def compute_outcome(
    scenario: Scenario, steps: Iterable[Step], categories: Mapping[int, SeverityCategory]
) -> ScenarioOutcome:
    """Compute one scenario per rated receptor; the headline is the governing receptor's."""
    listed = list(steps)
    assessment, category, error = outcome_of(
        scenario, listed, categories, people_not_rated=scenario.people_not_rated,
        assessed=assessment_of)
    if assessment is None:
        return ScenarioOutcome(None, None, error, missing=missing_of(scenario, listed))
    rated = receptor_categories(scenario, categories, people_not_rated=scenario.people_not_rated)
    return ScenarioOutcome(assessment.as_credited.result, category, "", assessment,
                           tuple((r, rated[r]) for r in Receptor if r in rated))


def required_rrf_cell(result: ScenarioResult) -> float | str:
    """The added risk reduction a scenario asks for, as the screen and every file show it:
    the factor when short of target, "none needed" when it meets target (never a bare 1)."""
    return NONE_NEEDED if result.meets_target else result.required_rrf
