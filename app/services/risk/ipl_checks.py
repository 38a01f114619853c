"""Run the IPL checks on stored scenarios: map Step rows to the pure checks and collect warnings."""

from collections.abc import Iterable
from dataclasses import dataclass

from app.db.models import Step
from app.likelihood.checks import CheckedStep, CheckWarning, check_scenario
from app.likelihood.types import IplType, StepKind
from app.services.study.tree import ScenarioBranch, StudyTree, WorksheetSpot


@dataclass(frozen=True)
class ScenarioWarnings:
    """The warnings of one scenario with where to find it on the worksheet."""

    scenario_id: int
    node_id: int
    node_label: str
    scenario_label: str
    spot: WorksheetSpot
    warnings: tuple[CheckWarning, ...]


def _ipl_type(stored: str | None) -> IplType | None:
    # An unknown stored type checks as "no type given" rather than failing the page.
    return IplType(stored) if stored in tuple(IplType) else None


def checked_step(step: Step, cause_system_tag: str = "") -> CheckedStep:
    """One stored step as the checks see it."""
    return CheckedStep(
        kind=step.kind,
        value=step.value,
        label=step.description,
        credited=step.credited,
        ipl_type=_ipl_type(step.ipl_type),
        system_tag=step.system_tag,
        response_time_minutes=step.response_time_minutes,
        sil_claimed=step.sil_claimed,
        typical_key=step.typical_key,
        cause_system_tag=cause_system_tag,
    )


def checked_steps(steps: Iterable[Step]) -> list[CheckedStep]:
    """Stored steps in order; the initiating event's system_tag names the cause's system."""
    ordered = sorted(steps, key=lambda s: (s.position, s.id or 0))
    return [
        checked_step(s, s.system_tag if s.kind == StepKind.INITIATING_EVENT else "")
        for s in ordered
    ]


def scenario_warnings(scenario_node: ScenarioBranch) -> list[CheckWarning]:
    """Every IPL-check warning for one scenario (warnings never block its result)."""
    return check_scenario(checked_steps(scenario_node.steps))


def study_warnings(tree: StudyTree) -> list[ScenarioWarnings]:
    """Each scenario of the study that raises warnings, in worksheet order."""
    found = []
    for node_branch in tree.nodes:
        node = node_branch.node
        for item in node_branch.scenario_branches():
            warnings = scenario_warnings(item)
            if not warnings:
                continue
            scenario = item.scenario
            found.append(ScenarioWarnings(
                scenario_id=scenario.id or 0,
                node_id=node.id or 0,
                node_label=f"{node.number} {node.name}",
                scenario_label=f"{scenario.cause} → {scenario.consequence}",
                spot=WorksheetSpot(tree.study.id or 0, node.id or 0, scenario.id or 0),
                warnings=tuple(warnings),
            ))
    return found
