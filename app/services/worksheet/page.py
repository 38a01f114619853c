"""The node worksheet page: display-ready scenarios with their figures, ladders and warnings."""

from collections import defaultdict
from dataclasses import dataclass

from sqlmodel import Session

from app.db.models import Node, Recommendation, SeverityCategory, Step, Study
from app.db.queries import (
    fetch_first_node_id,
    fetch_node_links,
    fetch_recommendations_of_node,
    fetch_recommendations_of_scenario,
)
from app.likelihood.checks import CheckWarning
from app.likelihood.numbers import format_number
from app.likelihood.types import LikelihoodInputError, StepKind
from app.services.risk.ipl_checks import scenario_warnings
from app.services.study.listing import NodeTotals
from app.services.study.stored_results import stored_totals
from app.services.study.tree import (
    DeviationBranch,
    NodeBranch,
    ScenarioBranch,
    get_study,
    load_node_tree,
    load_scenario_branch,
)
from app.services.worksheet.ladder import LadderView, build_ladder
from app.services.worksheet.structure import (
    parse_step_value,
    step_label,
)
from app.services.worksheet.undo import DeleteCounts, UndoState, delete_question, undo_state


@dataclass(frozen=True)
class StepRow:
    """One step as the worksheet shows it: the text in the box and what it was read as."""

    step: Step
    kind: StepKind
    is_frequency: bool
    value_text: str
    plain: str
    delete_question: str


@dataclass(frozen=True)
class ScenarioView:
    """One scenario, display-ready: steps in ladder order, figures, ladder, warnings, actions."""

    item: ScenarioBranch
    number: str
    steps: tuple[StepRow, ...]
    ladder: LadderView | None
    warnings: tuple[CheckWarning, ...]
    recommendations: tuple[Recommendation, ...]
    delete_question: str
    fallback: str = ""

    @property
    def state(self) -> int:
        """How far the saved scenario has come: every save bumps one of these versions by one,
        so of two replies the one computed from more saves has the larger number. The page
        keeps the figures with the largest (replies can arrive out of order)."""
        rows = [self.item.scenario, *self.item.steps, *self.item.safeguards]
        return sum(row.version for row in rows)


@dataclass(frozen=True)
class DeviationView:
    """One deviation with its scenarios."""

    deviation_branch: DeviationBranch
    number: str
    scenarios: tuple[ScenarioView, ...]
    delete_question: str


@dataclass(frozen=True)
class NodeLink:
    """A node as the node switcher lists it."""

    id: int
    number: str
    name: str


@dataclass(frozen=True)
class WorksheetPage:
    """Everything the node worksheet shows."""

    study: Study
    node: Node
    nodes: tuple[NodeLink, ...]
    categories: tuple[SeverityCategory, ...]
    deviations: tuple[DeviationView, ...]
    node_totals: NodeTotals
    study_totals: NodeTotals
    undo: UndoState
    node_delete_question: str


NOT_GIVEN = "not given yet"


def shown_value(step: Step) -> str:
    """What the value box holds: the team's words, or nothing while no value is given."""
    if step.value is None:
        return ""
    return step.value_text or format_number(step.value)


def plain_value(step: Step) -> str:
    """The stored value restated in plain words ("1 in 100 · 1.0e-2")."""
    if step.value is None:
        return NOT_GIVEN
    for text in (step.value_text, repr(step.value)):
        try:
            return parse_step_value(step.kind, text).plain
        except LikelihoodInputError:
            continue
    return format_number(step.value)


def _step_rows(steps: list[Step]) -> tuple[StepRow, ...]:
    ordered = sorted(steps, key=lambda s: (s.kind.order,
                                           s.position, s.id or 0))
    rows = []
    for step in ordered:
        kind = step.kind
        question = f"Delete step '{step_label(step)}' ({kind.label.lower()})?"
        rows.append(StepRow(step, kind, kind == StepKind.INITIATING_EVENT,
                            shown_value(step), plain_value(step),
                            question))
    return tuple(rows)


def recommendations_by_scenario(session: Session, node_id: int
                            ) -> dict[int, tuple[Recommendation, ...]]:
    """The recommendations linked to each scenario of one node, in the actions' order."""
    linked: dict[int, list[Recommendation]] = defaultdict(list)
    for scenario_id, action in fetch_recommendations_of_node(session, node_id):
        linked[scenario_id].append(action)
    return {scenario_id: tuple(actions) for scenario_id, actions in linked.items()}


def scenario_view(item: ScenarioBranch, number: str, recommendations: tuple[Recommendation, ...],
                  fallback: str = "") -> ScenarioView:
    """Display-ready data of one scenario."""
    result = item.outcome.result
    counts = DeleteCounts(steps=len(item.steps), safeguards=len(item.safeguards))
    label = f"{number} '{item.scenario.cause[:60]}'" if item.scenario.cause else number
    return ScenarioView(
        item=item, number=number, steps=_step_rows(item.steps),
        ladder=build_ladder(result) if result is not None else None,
        warnings=(item.outcome.assessment.warnings if item.outcome.assessment
                  else tuple(scenario_warnings(item))),
        recommendations=recommendations,
        delete_question=delete_question("scenario", label, counts), fallback=fallback,
    )


def _deviation_view(deviation_branch: DeviationBranch, number: str,
                    recommendations: dict[int, tuple[Recommendation, ...]]) -> DeviationView:
    deviation = deviation_branch.deviation
    scenarios = tuple(scenario_view(item, f"{number}.{index}",
                                    recommendations.get(item.scenario.id or 0, ()))
                      for index, item in enumerate(deviation_branch.scenarios, start=1))
    counts = DeleteCounts(scenarios=len(scenarios),
                          steps=sum(len(s.item.steps) for s in scenarios),
                          safeguards=sum(len(s.item.safeguards) for s in scenarios))
    label = f"{number} '{deviation.guideword} {deviation.parameter}'".rstrip(" '")
    return DeviationView(deviation_branch, number, scenarios,
                         delete_question("deviation", label, counts))


def node_delete_question(node_branch: NodeBranch) -> str:
    """The question asked before deleting a node, counting what goes with it."""
    scenarios = node_branch.scenario_branches()
    counts = DeleteCounts(deviations=len(node_branch.deviations), scenarios=len(scenarios),
                          steps=sum(len(s.steps) for s in scenarios),
                          safeguards=sum(len(s.safeguards) for s in scenarios))
    return delete_question("node", node_branch.node.number, counts)


def build_worksheet_page(*, session: Session, study_id: int, node_id: int,
                         author: str = "") -> WorksheetPage:
    """The node's deviations and scenarios, every scenario computed, with node and study totals.

    Only this node's rows are loaded as objects; the totals come from plain rows.
    """
    tree = load_node_tree(session, study_id, node_id)
    node_branch = tree.node
    number = node_branch.node.number or str(node_id)
    recommendations = recommendations_by_scenario(session, node_id)
    deviations = tuple(_deviation_view(d, f"{number}.{i}", recommendations)
                       for i, d in enumerate(node_branch.deviations, start=1))
    node_totals, study_totals = stored_totals(session, study_id, node_id)
    return WorksheetPage(
        study=tree.study, node=node_branch.node, nodes=node_links(session, study_id),
        categories=tuple(tree.categories), deviations=deviations,
        node_totals=node_totals, study_totals=study_totals,
        undo=undo_state(session=session, study_id=study_id, author=author),
        node_delete_question=node_delete_question(node_branch),
    )


def node_links(session: Session, study_id: int) -> tuple[NodeLink, ...]:
    """Every node of the study for the node switcher, in display order."""
    return tuple(NodeLink(row.id, row.number, row.name)
                 for row in fetch_node_links(session, study_id))


def picked_node_id(*, session: Session, study_id: int, picked: str) -> int | None:
    """The node chosen in the node picker when it belongs to the study, else the first node."""
    ids = [link.id for link in node_links(session, study_id)] if picked else []
    chosen = int(picked) if picked.isdigit() else None
    return chosen if chosen in ids else first_node_id(session=session, study_id=study_id)


def first_node_id(*, session: Session, study_id: int) -> int | None:
    """The study's first node, where the worksheet opens (None when it has none)."""
    get_study(session, study_id)
    return fetch_first_node_id(session, study_id)


def located_scenario(*, session: Session, study_id: int, scenario_id: int,
                     fallback: str = "") -> tuple[ScenarioView, Node]:
    """One scenario recomputed and numbered within its node; no other scenario is loaded."""
    placed = load_scenario_branch(session, study_id, scenario_id)
    links = fetch_recommendations_of_scenario(session, scenario_id)
    return scenario_view(placed.branch, placed.number, links, fallback), placed.node
