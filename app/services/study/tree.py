"""Load a whole study, or one node of it, in a handful of queries and compute its scenarios."""

from collections import defaultdict
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import cached_property, partial
from typing import Any

from sqlalchemy import bindparam
from sqlmodel import Session, col, select

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
from app.db.queries import (
    fetch_rows_of_node,
    fetch_rows_of_scenario,
    fetch_rows_of_study,
    place_in_node,
)
from app.services.study.results import (
    ScenarioOutcome,
    compute_outcome,
    receptor_categories,
    targets_of,
)
from app.services.study.spread import (
    NO_INPUTS,
    ErrorFactorInputs,
    ScenarioSpread,
    load_error_factor_inputs,
    refreshed_inputs,
    scenario_spread,
)


class NotFoundError(LookupError):
    """A requested row does not exist (the route answers 404)."""


@dataclass(frozen=True)
class WorksheetSpot:
    """Where a row sits on the worksheet: templates link to it by route name
    (`worksheet_path`), so no service writes a web path."""

    study_id: int
    node_id: int
    scenario_id: int | None = None

    @property
    def anchor(self) -> str:
        """The element id on the worksheet page ("scenario-12"; empty for a whole node)."""
        return f"scenario-{self.scenario_id}" if self.scenario_id is not None else ""


@dataclass
class ScenarioBranch:
    """One scenario with its steps, safeguards and computed outcome."""

    scenario: Scenario
    steps: list[Step]
    safeguards: list[Safeguard]
    outcome: ScenarioOutcome
    spread_source: Callable[[], ScenarioSpread | None] | None = field(
        default=None, repr=False, compare=False)

    @cached_property
    def spread(self) -> ScenarioSpread | None:
        """The mitigated frequency's lognormal per receptor line (issue 13); None: no figures.

        Worked out on first use: a page that shows no uncertainty (the actions of a few
        scenarios, a node's totals) does not pay for every scenario's.
        """
        return self.spread_source() if self.spread_source else None


@dataclass
class DeviationBranch:
    deviation: Deviation
    scenarios: list[ScenarioBranch] = field(default_factory=list)


@dataclass
class NodeBranch:
    node: Node
    deviations: list[DeviationBranch] = field(default_factory=list)

    def scenario_branches(self) -> list[ScenarioBranch]:
        """Every scenario of this node, in worksheet order."""
        return [s for d in self.deviations for s in d.scenarios]


@dataclass
class StudyTree:
    """The whole study, ordered as the worksheet shows it."""

    study: Study
    categories: list[SeverityCategory]
    nodes: list[NodeBranch]
    recommendations: list[Recommendation]

    def scenario_branches(self) -> list[ScenarioBranch]:
        """Every scenario of the study, in worksheet order."""
        return [s for n in self.nodes for s in n.scenario_branches()]


@dataclass
class NodeTree:
    """One node of a study, ordered and computed as the worksheet shows it."""

    study: Study
    categories: list[SeverityCategory]
    node: NodeBranch


@dataclass(frozen=True)
class _ContentRows:
    """Deviations, scenarios, steps and safeguards, each grouped by its parent's id."""

    deviations: dict[int, list[Deviation]]
    scenarios: dict[int, list[Scenario]]
    steps: dict[int, list[Step]]
    safeguards: dict[int, list[Safeguard]]


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
    rows = _content_rows(lambda model: fetch_rows_of_study(session, model, study_id))
    nodes = _assemble(fetch_rows_of_study(session, Node, study_id), rows, categories,
                      load_error_factor_inputs(session, study))
    actions = fetch_rows_of_study(session, Recommendation, study_id)
    return StudyTree(study, categories, nodes, actions)


def load_node_tree(session: Session, study_id: int, node_id: int) -> NodeTree:
    """One node's content with its scenarios computed; no other node's rows are loaded."""
    study = get_study(session, study_id)
    node = session.get(Node, node_id)
    if node is None or node.study_id != study_id:
        raise NotFoundError(f"There is no node {node_id} in study {study_id}.")
    categories = fetch_rows_of_study(session, SeverityCategory, study_id)
    rows = _content_rows(lambda model: fetch_rows_of_node(session, model, node_id))
    inputs = load_error_factor_inputs(session, study)
    return NodeTree(study, categories, _assemble([node], rows, categories, inputs)[0])


@dataclass(frozen=True)
class PlacedScenario:
    """One scenario computed, with its node and its worksheet number ("3.2.5")."""

    branch: ScenarioBranch
    node: Node
    number: str


# Built once: a scenario with its deviation and node, one statement (every keystroke's reply).
_SCENARIO_WITH_PARENTS = (
    select(Scenario, Deviation, Node)
    .join(Deviation, col(Deviation.id) == col(Scenario.deviation_id))
    .join(Node, col(Node.id) == col(Deviation.node_id))
    .where(col(Scenario.id) == bindparam("scenario_id")))


def load_scenario_branch(session: Session, study_id: int, scenario_id: int) -> PlacedScenario:
    """One scenario's rows and outcome, numbered in its node; no other scenario is loaded."""
    placed = session.exec(_SCENARIO_WITH_PARENTS, params={"scenario_id": scenario_id}).first()
    if placed is None or placed[0].study_id != study_id:
        raise NotFoundError(f"There is no scenario {scenario_id} in study {study_id}.")
    scenario, deviation, node = placed
    by_id = {c.id: c for c in fetch_rows_of_study(session, SeverityCategory, study_id)
             if c.id is not None}
    steps = _group(fetch_rows_of_scenario(session, Step, scenario_id), "scenario_id")[scenario_id]
    safeguards = _group(fetch_rows_of_scenario(session, Safeguard, scenario_id),
                        "scenario_id")[scenario_id]
    deviation_place, scenario_place = place_in_node(session, deviation, scenario)
    number = ".".join((node.number or str(node.id), str(deviation_place), str(scenario_place)))
    outcome = compute_outcome(scenario, steps, by_id)
    inputs = refreshed_inputs(session, study_id, (step.id or 0 for step in steps))
    if inputs is None:
        inputs = load_error_factor_inputs(session, get_study(session, study_id))
    branch = ScenarioBranch(scenario, steps, safeguards, outcome,
                            partial(_spread_of, scenario, steps, by_id, inputs, outcome))
    return PlacedScenario(branch, node, number)


def _content_rows(fetch: Callable[[type[Any]], list[Any]]) -> _ContentRows:
    return _ContentRows(
        deviations=_group(fetch(Deviation), "node_id"),
        scenarios=_group(fetch(Scenario), "deviation_id"),
        steps=_group(fetch(Step), "scenario_id"),
        safeguards=_group(fetch(Safeguard), "scenario_id"),
    )


def _assemble(nodes: list[Node], rows: _ContentRows, categories: list[SeverityCategory],
              inputs: ErrorFactorInputs = NO_INPUTS) -> list[NodeBranch]:
    """Nest the rows under their nodes in worksheet order, computing each scenario."""
    by_id = {c.id: c for c in categories if c.id is not None}
    assembled = []
    for node in nodes:
        node_branch = NodeBranch(node)
        for deviation in rows.deviations[node.id or 0]:
            deviation_branch = DeviationBranch(deviation)
            for scenario in rows.scenarios[deviation.id or 0]:
                steps = rows.steps[scenario.id or 0]
                outcome = compute_outcome(scenario, steps, by_id)
                deviation_branch.scenarios.append(ScenarioBranch(
                    scenario, steps, rows.safeguards[scenario.id or 0], outcome,
                    partial(_spread_of, scenario, steps, by_id, inputs, outcome)))
            node_branch.deviations.append(deviation_branch)
        assembled.append(node_branch)
    return assembled


def _spread_of(scenario: Scenario, steps: list[Step], categories: dict[int, SeverityCategory],
               inputs: ErrorFactorInputs, outcome: ScenarioOutcome) -> ScenarioSpread | None:
    if outcome.assessment is None:
        return None  # no figures: nothing to spread
    rated = receptor_categories(scenario, categories, people_not_rated=scenario.people_not_rated)
    return scenario_spread(steps, targets_of(rated), inputs,
                           outcome.assessment.as_credited.receptors)


def _group(rows: list, key: str) -> dict[int, list]:  # type: ignore[type-arg]
    grouped: dict[int, list] = defaultdict(list)  # type: ignore[type-arg]
    for row in rows:
        grouped[getattr(row, key)].append(row)
    return grouped
