"""Load a whole study in a handful of queries and compute every scenario once."""

from collections import defaultdict
from dataclasses import dataclass, field

from sqlmodel import Session

from app.db.models import (
    Deviation,
    Node,
    Recommendation,
    Safeguard,
    Scenario,
    SeverityCategory,
    Step,
    Study,
)
from app.db.queries import fetch_rows_of_study
from app.services.results import ScenarioOutcome, compute_outcome


class NotFoundError(LookupError):
    """A requested row does not exist (the route answers 404)."""


@dataclass
class ScenarioNode:
    """One scenario with its steps, safeguards and computed outcome."""

    scenario: Scenario
    steps: list[Step]
    safeguards: list[Safeguard]
    outcome: ScenarioOutcome


@dataclass
class DeviationNode:
    deviation: Deviation
    scenarios: list[ScenarioNode] = field(default_factory=list)


@dataclass
class NodeNode:
    node: Node
    deviations: list[DeviationNode] = field(default_factory=list)

    def scenario_nodes(self) -> list[ScenarioNode]:
        """Every scenario of this node, in worksheet order."""
        return [s for d in self.deviations for s in d.scenarios]


@dataclass
class StudyTree:
    """The whole study, ordered as the worksheet shows it."""

    study: Study
    categories: list[SeverityCategory]
    nodes: list[NodeNode]
    recommendations: list[Recommendation]

    def scenario_nodes(self) -> list[ScenarioNode]:
        """Every scenario of the study, in worksheet order."""
        return [s for n in self.nodes for s in n.scenario_nodes()]


def get_study(session: Session, study_id: int) -> Study:
    """The study, or NotFoundError."""
    study = session.get(Study, study_id)
    if study is None:
        raise NotFoundError(f"There is no study {study_id}.")
    return study


def load_study_tree(session: Session, study_id: int) -> StudyTree:
    """All of a study's content with every scenario computed."""
    study = get_study(session, study_id)
    categories = fetch_rows_of_study(session, SeverityCategory, study_id)
    by_id = {c.id: c for c in categories if c.id is not None}
    steps = _group(fetch_rows_of_study(session, Step, study_id), "scenario_id")
    safeguards = _group(fetch_rows_of_study(session, Safeguard, study_id), "scenario_id")
    scenarios = _group(fetch_rows_of_study(session, Scenario, study_id), "deviation_id")
    deviations = _group(fetch_rows_of_study(session, Deviation, study_id), "node_id")
    nodes = []
    for node in fetch_rows_of_study(session, Node, study_id):
        node_node = NodeNode(node)
        for deviation in deviations[node.id]:
            deviation_node = DeviationNode(deviation)
            for scenario in scenarios[deviation.id]:
                outcome = compute_outcome(scenario, steps[scenario.id], by_id)
                deviation_node.scenarios.append(
                    ScenarioNode(scenario, steps[scenario.id], safeguards[scenario.id], outcome)
                )
            node_node.deviations.append(deviation_node)
        nodes.append(node_node)
    actions = fetch_rows_of_study(session, Recommendation, study_id)
    return StudyTree(study, categories, nodes, actions)


def _group(rows: list, key: str) -> dict[int, list]:  # type: ignore[type-arg]
    grouped: dict[int, list] = defaultdict(list)  # type: ignore[type-arg]
    for row in rows:
        grouped[getattr(row, key)].append(row)
    return grouped
