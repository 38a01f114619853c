"""The node worksheet: display-ready scenarios with their ladders, and live value edits."""

from collections import OrderedDict, defaultdict
from dataclasses import dataclass
from threading import Lock

from sqlmodel import Session

from app.db.models import DeletedItem, Node, Recommendation, SeverityCategory, Step, Study
from app.db.queries import fetch_first_node_id, fetch_node_links, fetch_recommendations_of_node
from app.likelihood.checks import CheckWarning
from app.likelihood.numbers import format_number
from app.likelihood.types import STEP_KIND_LABELS, LikelihoodInputError, StepKind
from app.services.risk.ipl_checks import scenario_warnings
from app.services.study.listing import NodeTotals
from app.services.study.totals import study_totals
from app.services.study.tree import (
    DeviationNode,
    NodeNode,
    ScenarioNode,
    get_study,
    load_node_tree,
)
from app.services.worksheet.ladder import LadderView, build_ladder
from app.services.worksheet.structure import parse_step_value, step_label
from app.services.worksheet.undo import DeleteCounts, delete_question, last_deleted

KIND_ORDER = [StepKind.INITIATING_EVENT, StepKind.ENABLING_CONDITION,
              StepKind.CONDITIONAL_MODIFIER, StepKind.IPL]


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

    item: ScenarioNode
    number: str
    steps: tuple[StepRow, ...]
    ladder: LadderView | None
    warnings: tuple[CheckWarning, ...]
    recommendations: tuple[Recommendation, ...]
    delete_question: str
    fallback: str = ""


@dataclass(frozen=True)
class DeviationView:
    """One deviation with its scenarios."""

    deviation_node: DeviationNode
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
    undo: DeletedItem | None
    node_delete_question: str


def plain_value(step: Step) -> str:
    """The stored value restated in plain words ("1 in 100 · 1.0e-2")."""
    for text in (step.value_text, repr(step.value)):
        try:
            return parse_step_value(str(step.kind), text).plain
        except LikelihoodInputError:
            continue
    return format_number(step.value)


def _step_rows(steps: list[Step]) -> tuple[StepRow, ...]:
    ordered = sorted(steps, key=lambda s: (KIND_ORDER.index(StepKind(str(s.kind))),
                                           s.position, s.id or 0))
    rows = []
    for step in ordered:
        kind = StepKind(str(step.kind))
        question = f"Delete step '{step_label(step)}' ({STEP_KIND_LABELS[kind].lower()})?"
        rows.append(StepRow(step, kind, kind == StepKind.INITIATING_EVENT,
                            step.value_text or format_number(step.value), plain_value(step),
                            question))
    return tuple(rows)


def recommendations_of_node(session: Session, node_id: int
                            ) -> dict[int, tuple[Recommendation, ...]]:
    """The recommendations linked to each scenario of one node, in the actions' order."""
    linked: dict[int, list[Recommendation]] = defaultdict(list)
    for scenario_id, action in fetch_recommendations_of_node(session, node_id):
        linked[scenario_id].append(action)
    return {scenario_id: tuple(actions) for scenario_id, actions in linked.items()}


def scenario_view(item: ScenarioNode, number: str, recommendations: tuple[Recommendation, ...],
                  fallback: str = "") -> ScenarioView:
    """Display-ready data of one scenario."""
    result = item.outcome.result
    counts = DeleteCounts(steps=len(item.steps), safeguards=len(item.safeguards))
    label = f"{number} '{item.scenario.cause[:60]}'" if item.scenario.cause else number
    return ScenarioView(
        item=item, number=number, steps=_step_rows(item.steps),
        ladder=build_ladder(result) if result is not None else None,
        warnings=tuple(scenario_warnings(item)),
        recommendations=recommendations,
        delete_question=delete_question("scenario", label, counts), fallback=fallback,
    )


def _deviation_view(deviation_node: DeviationNode, number: str,
                    recommendations: dict[int, tuple[Recommendation, ...]]) -> DeviationView:
    deviation = deviation_node.deviation
    scenarios = tuple(scenario_view(item, f"{number}.{index}",
                                    recommendations.get(item.scenario.id or 0, ()))
                      for index, item in enumerate(deviation_node.scenarios, start=1))
    counts = DeleteCounts(scenarios=len(scenarios),
                          steps=sum(len(s.item.steps) for s in scenarios),
                          safeguards=sum(len(s.item.safeguards) for s in scenarios))
    label = f"{number} '{deviation.guideword} {deviation.parameter}'".rstrip(" '")
    return DeviationView(deviation_node, number, scenarios,
                         delete_question("deviation", label, counts))


def node_delete_question(node_node: NodeNode) -> str:
    """The question asked before deleting a node, counting what goes with it."""
    scenarios = node_node.scenario_nodes()
    counts = DeleteCounts(deviations=len(node_node.deviations), scenarios=len(scenarios),
                          steps=sum(len(s.steps) for s in scenarios),
                          safeguards=sum(len(s.safeguards) for s in scenarios))
    return delete_question("node", node_node.node.number, counts)


def read_worksheet(*, session: Session, study_id: int, node_id: int) -> WorksheetPage:
    """The node's deviations and scenarios, every scenario computed, with node and study totals.

    Only this node's rows are loaded as objects; the totals come from plain rows.
    """
    tree = load_node_tree(session, study_id, node_id)
    node_node = tree.node
    number = node_node.node.number or str(node_id)
    recommendations = recommendations_of_node(session, node_id)
    deviations = tuple(_deviation_view(d, f"{number}.{i}", recommendations)
                       for i, d in enumerate(node_node.deviations, start=1))
    totals = study_totals(session, study_id)
    return WorksheetPage(
        study=tree.study, node=node_node.node, nodes=node_links(session, study_id),
        categories=tuple(tree.categories), deviations=deviations,
        node_totals=totals.of_node(node_id), study_totals=totals.study,
        undo=last_deleted(session=session, study_id=study_id),
        node_delete_question=node_delete_question(node_node),
    )


def node_links(session: Session, study_id: int) -> tuple[NodeLink, ...]:
    """Every node of the study for the node switcher, in display order."""
    return tuple(NodeLink(row.id, row.number, row.name)
                 for row in fetch_node_links(session, study_id))


def first_node_id(*, session: Session, study_id: int) -> int | None:
    """The study's first node, where the worksheet opens (None when it has none)."""
    get_study(session, study_id)
    return fetch_first_node_id(session, study_id)


class LatestEdits:
    """The newest sequence number seen per (step, browser page), so an older edit is dropped."""

    def __init__(self, capacity: int = 10_000) -> None:
        self._seen: OrderedDict[tuple[int, str], int] = OrderedDict()
        self._lock = Lock()
        self._capacity = capacity

    def accept(self, step_id: int, client: str, seq: int | None) -> bool:
        """True when this edit is newer than every one seen from that page for that step."""
        if not client or seq is None:
            return True  # a plain form post carries no sequence: always current
        with self._lock:
            key = (step_id, client)
            if seq <= self._seen.get(key, -1):
                return False
            self._seen[key] = seq
            self._seen.move_to_end(key)
            while len(self._seen) > self._capacity:
                self._seen.popitem(last=False)
            return True


LATEST_EDITS = LatestEdits()
