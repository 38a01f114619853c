"""Run the IPL checks on stored scenarios: map Step rows to the pure checks and collect warnings."""

from dataclasses import dataclass

from app.likelihood.checks import CheckWarning
from app.services.study.results import checked_steps, warnings_of
from app.services.study.tree import ScenarioBranch, StudyTree, WorksheetSpot

__all__ = ["ScenarioWarnings", "checked_steps", "scenario_warnings", "study_warnings"]


@dataclass(frozen=True)
class ScenarioWarnings:
    """The warnings of one scenario with where to find it on the worksheet."""

    scenario_id: int
    node_id: int
    node_label: str
    scenario_label: str
    spot: WorksheetSpot
    warnings: tuple[CheckWarning, ...]


def scenario_warnings(scenario_node: ScenarioBranch) -> list[CheckWarning]:
    """Every IPL-check warning for one scenario (warnings never block its result)."""
    return warnings_of(scenario_node.steps)


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
