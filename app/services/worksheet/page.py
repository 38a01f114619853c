"""The node worksheet page: display-ready scenarios with their figures, ladders and warnings."""

from collections import defaultdict
from dataclasses import dataclass

from sqlmodel import Session

from app.db.ids import read_row_id
from app.db.models import Deviation, Node, Recommendation, SeverityCategory, Step, Study
from app.db.queries import (
    fetch_first_node_id,
    fetch_node_links,
    fetch_recommendations_of_node,
    fetch_recommendations_of_scenario,
    fetch_rows_of_study,
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
    NotFoundError,
    ScenarioBranch,
    get_study,
    load_node_tree,
    load_scenario_branch,
)
from app.services.worksheet.ladder import LadderBand, LadderView, build_ladder, ladder_band
from app.services.worksheet.sheet_rows import (
    MoreRows,
    NodeOutline,
    SlimScenario,
    child_counts,
    is_paged,
    more_rows,
    node_outline,
    rows_to_draw,
    scenario_branches,
    scenario_number,
    scenarios_worked_on,
    slim_scenarios,
)
from app.services.worksheet.structure import (
    get_row,
    kind_of,
    node_id_of,
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

    @property
    def band(self) -> LadderBand | None:
        """The governing line's 5-95 % band on the ladder (None: no figures or no spread)."""
        spread = self.item.spread
        if self.ladder is None or spread is None or spread.governing.distribution.sigma == 0:
            return None
        found = spread.governing.distribution
        return ladder_band(self.ladder, found.p05, found.p95)

    @property
    def slim(self) -> bool:
        """A full row (the worksheet also draws slim ones: sheet_rows.SlimScenario)."""
        return False


@dataclass(frozen=True)
class DeviationView:
    """One deviation with its scenarios."""

    deviation_branch: DeviationBranch
    number: str
    scenarios: tuple[ScenarioView | SlimScenario, ...]
    delete_question: str
    more: MoreRows | None = None
    """The scenarios not drawn yet (a large node's page arrives in parts)."""


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
    paged: bool = False
    """Scenarios show as slim rows, the ones being worked on in full."""


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
    label = deviation_label(deviation, number)
    return DeviationView(deviation_branch, number, scenarios,
                         delete_question("deviation", label, counts))


def deviation_label(deviation: Deviation, number: str) -> str:
    """How a delete question names a deviation: "1.2 'More pressure'" (its number alone when
    it has no words yet)."""
    words = f"{deviation.guideword} {deviation.parameter}".strip()
    return f"{number} '{words}'" if words else number


def node_delete_question(node_branch: NodeBranch) -> str:
    """The question asked before deleting a node, counting what goes with it."""
    scenarios = node_branch.scenario_branches()
    counts = DeleteCounts(deviations=len(node_branch.deviations), scenarios=len(scenarios),
                          steps=sum(len(s.steps) for s in scenarios),
                          safeguards=sum(len(s.safeguards) for s in scenarios))
    return delete_question("node", node_branch.node.number, counts)


def build_worksheet_page(*, session: Session, study_id: int, node_id: int,
                         author: str = "", focus_id: str = "",
                         open_ids: tuple[int, ...] = ()) -> WorksheetPage:
    """The node's deviations and scenarios with node and study totals.

    A node of a few scenarios has every scenario in full; a larger one is drawn in parts
    (sheet_rows). Only this node's rows are loaded; the totals come from plain rows.
    """
    study = get_study(session, study_id)
    node = session.get(Node, node_id)
    if node is None or node.study_id != study_id:
        raise NotFoundError(f"There is no node {node_id} in study {study_id}.")
    outline = node_outline(session, node_id)
    if is_paged(outline):
        categories = fetch_rows_of_study(session, SeverityCategory, study_id)
        wanted = scenarios_worked_on(session, outline, focus_id, open_ids)
        counts = child_counts(session, node_id)
        deviations = paged_deviations(session, study_id, node, outline, categories, wanted,
                                      counts)
        question = delete_question("node", _number(node), DeleteCounts(
            deviations=len(outline.deviations), scenarios=outline.scenario_count,
            steps=sum(counts["steps"].values()), safeguards=sum(counts["safeguards"].values())))
    else:
        tree = load_node_tree(session, study_id, node_id)
        categories, question = tree.categories, node_delete_question(tree.node)
        recommendations = recommendations_by_scenario(session, node_id)
        deviations = tuple(_deviation_view(d, f"{_number(node)}.{i}", recommendations)
                           for i, d in enumerate(tree.node.deviations, start=1))
    node_totals, study_totals = stored_totals(session, study_id, node_id)
    return WorksheetPage(
        study=study, node=node, nodes=node_links(session, study_id),
        categories=tuple(categories), deviations=deviations,
        node_totals=node_totals, study_totals=study_totals,
        undo=undo_state(session=session, study_id=study_id, author=author),
        node_delete_question=question, paged=is_paged(outline),
    )


def _number(node: Node) -> str:
    return node.number or str(node.id)


def paged_deviations(session: Session, study_id: int, node: Node, outline: NodeOutline,
                     categories: list[SeverityCategory], wanted: set[int],
                     counts: dict[str, dict[int, int]]) -> tuple[DeviationView, ...]:
    """A large node's deviations: the first rows slim, the scenarios worked on in full, the
    rest of each deviation to follow (`more`)."""
    drawn = rows_to_draw(outline, wanted)
    prefixes = {d.id or 0: f"{_number(node)}.{i}" for i, d in enumerate(outline.deviations, 1)}
    numbered = [(row, f"{prefixes[d_id]}.{at}") for d_id, rows in outline.scenarios.items()
                for at, row in enumerate(rows[:drawn.get(d_id, 0)], start=1)]
    slims = slim_scenarios(session, study_id, [(r, n) for r, n in numbered if r.id not in wanted],
                           categories)
    branches = scenario_branches(session, wanted, categories)
    linked = recommendations_by_scenario(session, node.id or 0) if wanted else {}
    views: dict[int, ScenarioView | SlimScenario] = {**slims, **{
        row.id: scenario_view(branches[row.id], number, linked.get(row.id, ()))
        for row, number in numbered if row.id in wanted}}
    return tuple(_paged_deviation(deviation, prefixes[deviation.id or 0], outline, views,
                                  drawn, counts) for deviation in outline.deviations)


def _paged_deviation(deviation: Deviation, number: str, outline: NodeOutline,
                     views: dict[int, ScenarioView | SlimScenario], drawn: dict[int, int],
                     counts: dict[str, dict[int, int]]) -> DeviationView:
    deviation_id = deviation.id or 0
    rows = outline.scenarios.get(deviation_id, [])
    shown = drawn.get(deviation_id, 0)
    delete_counts = DeleteCounts(scenarios=len(rows),
                                 steps=counts["steps"].get(deviation_id, 0),
                                 safeguards=counts["safeguards"].get(deviation_id, 0))
    label = deviation_label(deviation, number)
    return DeviationView(DeviationBranch(deviation), number,
                         tuple(views[row.id] for row in rows[:shown]),
                         delete_question("deviation", label, delete_counts),
                         more_rows(deviation_id, number, len(rows), shown))


def node_links(session: Session, study_id: int) -> tuple[NodeLink, ...]:
    """Every node of the study for the node switcher, in display order."""
    return tuple(NodeLink(row.id, row.number, row.name)
                 for row in fetch_node_links(session, study_id))


def picked_node_id(*, session: Session, study_id: int, picked: str) -> int | None:
    """The node chosen in the node picker when it belongs to the study, else the first node."""
    ids = [link.id for link in node_links(session, study_id)] if picked else []
    chosen = read_row_id(picked)
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


def opened_scenario(*, session: Session, study_id: int,
                    scenario_id: int) -> tuple[ScenarioView, Node, tuple[SeverityCategory, ...]]:
    """One scenario in full, numbered within its node, for opening a slim row: only that
    scenario's rows are loaded (and the node's outline for its number)."""
    scenario = get_row(session, kind_of("scenario"), study_id, scenario_id)
    node = session.get(Node, node_id_of(session, "scenario", scenario))
    assert node is not None  # a scenario's node is a foreign key
    outline = node_outline(session, node.id or 0)
    number = scenario_number(outline, node, scenario_id)
    categories = fetch_rows_of_study(session, SeverityCategory, study_id)
    branch = scenario_branches(session, [scenario_id], categories)[scenario_id]
    linked = recommendations_by_scenario(session, node.id or 0).get(scenario_id, ())
    return scenario_view(branch, number, linked), node, tuple(categories)
