"""A large node's worksheet in parts: slim rows, full rows only where the scribe works.

A node of a few scenarios shows every scenario in full. A larger one would be megabytes of
editing fields (a 500-scenario node was a 20 MB page taking seconds), so it shows each
scenario as one slim row (number, cause, consequence, figures, verdict) and in full only the
scenarios being worked on: the one holding the focus, the ones the scribe's page had open,
and any the scribe opens. The first paint holds the first rows; the rest of each deviation
arrives in parts as it scrolls into view.
"""

import re
from collections import defaultdict
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

from sqlmodel import Session, col, select

from app.db.ids import read_row_id
from app.db.models import Deviation, Node, Safeguard, Scenario, SeverityCategory, Step
from app.db.queries import (
    child_counts_by_deviation,
    fetch_plain_rows,
    fetch_rows_of_node,
    fetch_rows_of_study,
    scenario_outline_of_node,
    step_figures_of_scenarios,
)
from app.likelihood.types import ScenarioResult
from app.services.study.completeness import missing_of
from app.services.study.results import (
    INCOMPLETE,
    assessment_of_rows,
    compute_outcome,
    outcome_of,
)
from app.services.study.tree import NotFoundError, ScenarioBranch

# Any in this module: plain result rows from SQLAlchemy carry no column types (the ORM boundary).

FULL_NODE_UP_TO = 10
"""A node with at most this many scenarios shows every one in full (a few screens)."""
FIRST_PAINT_ROWS = 40
"""Slim rows in the first paint of a larger node (more than a projector screen holds)."""
ROWS_PER_PART = 50
"""Slim rows each later part brings."""
OPEN_AT_MOST = 5
"""Scenarios a redraw keeps open because the scribe's page had them open."""

_SCENARIO_OF_FIELD = re.compile(r"^(?:sc|add-sg|add-rec|scenario)-([0-9]+)(?:-|$)", re.ASCII)
_CHILD_OF_FIELD = re.compile(r"^(step|sg)-([0-9]+)-", re.ASCII)


@dataclass(frozen=True)
class SlimScenario:
    """One scenario as a single line: what it is and where it stands, no editing fields."""

    slim: ClassVar[bool] = True
    id: int
    number: str
    cause: str
    consequence: str
    result: ScenarioResult | None
    category_name: str
    flagged: bool
    error: str
    incomplete: bool = False

    @property
    def no_figures_words(self) -> str:
        """Why there are no figures, worded as ScenarioOutcome.no_figures_words."""
        if self.result is not None:
            return ""
        return f"{INCOMPLETE}: {self.error}" if self.incomplete else f"not computed: {self.error}"


@dataclass(frozen=True)
class MoreRows:
    """The part of a deviation's scenarios not drawn yet, fetched when it scrolls into view."""

    deviation_id: int
    start: int
    remaining: int
    first_number: str
    last_number: str


@dataclass(frozen=True)
class RowsPart:
    """Slim rows of one deviation from `start`, and what remains after them."""

    study_id: int
    node_id: int
    rows: tuple[SlimScenario, ...]
    more: MoreRows | None


@dataclass(frozen=True)
class NodeOutline:
    """A node's deviations and, under each, its scenarios as plain outline rows."""

    deviations: list[Deviation]
    scenarios: dict[int, list[Any]]

    @property
    def scenario_count(self) -> int:
        """How many scenarios the node has."""
        return sum(len(rows) for rows in self.scenarios.values())

    def scenario_ids(self) -> set[int]:
        """Every scenario id of the node."""
        return {row.id for rows in self.scenarios.values() for row in rows}


def node_outline(session: Session, node_id: int) -> NodeOutline:
    """The node's deviations (rows) and scenario outline (plain rows, no steps)."""
    scenarios: dict[int, list[Any]] = defaultdict(list)
    for row in fetch_plain_rows(session, scenario_outline_of_node(node_id)):
        scenarios[row.deviation_id].append(row)
    return NodeOutline(fetch_rows_of_node(session, Deviation, node_id), scenarios)


def is_paged(outline: NodeOutline) -> bool:
    """True when the node is too large to draw every scenario in full."""
    return outline.scenario_count > FULL_NODE_UP_TO


def scenarios_worked_on(session: Session, outline: NodeOutline, focus_id: str,
                        open_ids: Iterable[int]) -> set[int]:
    """The node's scenarios to draw in full: the focused field's and those the page had open."""
    node_ids = outline.scenario_ids()
    wanted = [scenario_id for scenario_id in open_ids if scenario_id in node_ids][:OPEN_AT_MOST]
    focused = scenario_of_field(session, focus_id)
    if focused in node_ids:
        wanted.append(focused)
    return set(wanted)


def scenario_of_field(session: Session, field_id: str) -> int | None:
    """The scenario a worksheet element id belongs to ("step-12-value_text": step 12's)."""
    found = _SCENARIO_OF_FIELD.match(field_id)
    if found:
        return read_row_id(found.group(1))
    child = _CHILD_OF_FIELD.match(field_id)
    row_id = read_row_id(child.group(2)) if child else None
    if child is None or row_id is None:
        return None
    row = session.get(Step if child.group(1) == "step" else Safeguard, row_id)
    return row.scenario_id if isinstance(row, Step | Safeguard) else None


def rows_to_draw(outline: NodeOutline, wanted: set[int]) -> dict[int, int]:
    """How many of each deviation's scenarios the first paint draws: the first rows of the
    node within the budget, and in any deviation up to the last scenario worked on."""
    budget = FIRST_PAINT_ROWS
    drawn = {}
    for deviation in outline.deviations:
        rows = outline.scenarios.get(deviation.id or 0, [])
        needed = max((index + 1 for index, row in enumerate(rows) if row.id in wanted),
                     default=0)
        drawn[deviation.id or 0] = max(min(len(rows), budget), needed)
        budget = max(0, budget - drawn[deviation.id or 0])
    return drawn


def slim_scenarios(session: Session, study_id: int, numbered: Sequence[tuple[Any, str]],
                   categories: Sequence[SeverityCategory]) -> dict[int, SlimScenario]:
    """Slim rows of the given outline rows, each with its figures computed from plain rows."""
    ids = [row.id for row, _ in numbered]
    steps: dict[int, list[Any]] = defaultdict(list)
    if ids:
        for step in fetch_plain_rows(session, step_figures_of_scenarios(study_id, ids)):
            steps[step.scenario_id].append(step)
    by_id = {category.id: category for category in categories if category.id is not None}
    return {row.id: _slim(row, number, steps[row.id], by_id) for row, number in numbered}


def _slim(row: Any, number: str, steps: list[Any],
          categories: Mapping[int, SeverityCategory]) -> SlimScenario:
    assessment, category, error = outcome_of(row, tuple(steps), categories,
                                             people_not_rated=bool(row.people_not_rated),
                                             assessed=assessment_of_rows)
    result = assessment.as_credited.result if assessment is not None else None
    return SlimScenario(row.id, number, row.cause, row.consequence, result,
                        category.name if category is not None else "",
                        assessment is not None and assessment.withdrawn is not None, error,
                        incomplete=bool(missing_of(row, steps)))


def scenario_branches(session: Session, scenario_ids: Iterable[int],
                      categories: Sequence[SeverityCategory]) -> dict[int, ScenarioBranch]:
    """The given scenarios with their steps and safeguards as rows, each computed."""
    ids = list(scenario_ids)
    if not ids:
        return {}
    scenarios = session.exec(select(Scenario).where(col(Scenario.id).in_(ids))).all()
    steps = _children(session, Step, ids)
    safeguards = _children(session, Safeguard, ids)
    by_id = {category.id: category for category in categories if category.id is not None}
    return {scenario.id or 0: ScenarioBranch(
        scenario, steps[scenario.id or 0], safeguards[scenario.id or 0],
        compute_outcome(scenario, steps[scenario.id or 0], by_id)) for scenario in scenarios}


def _children(session: Session, model: type[Step] | type[Safeguard],
              scenario_ids: list[int]) -> dict[int, list[Any]]:
    grouped: dict[int, list[Any]] = defaultdict(list)
    table: Any = model  # Any: ORM attributes as columns
    statement = (select(model).where(col(table.scenario_id).in_(scenario_ids))
                 .order_by(table.position, table.id))
    for row in session.exec(statement).all():
        grouped[table_row(row).scenario_id].append(row)
    return grouped


def table_row(row: Any) -> Any:
    """A step or safeguard row as its columns (Any: the two models share scenario_id)."""
    return row


def child_counts(session: Session, node_id: int) -> dict[str, dict[int, int]]:
    """Steps and safeguards of each of the node's deviations (for the delete questions)."""
    models: dict[str, type[Step] | type[Safeguard]] = {"steps": Step, "safeguards": Safeguard}
    return {name: {int(row.deviation_id): int(row.how_many) for row in
                   fetch_plain_rows(session, child_counts_by_deviation(model, node_id))}
            for name, model in models.items()}


def deviation_part(session: Session, study_id: int, deviation_id: int,
                   start: int) -> RowsPart:
    """The next part of one deviation's slim rows, from `start`."""
    deviation = session.get(Deviation, deviation_id)
    if deviation is None or deviation.study_id != study_id:
        raise NotFoundError(f"There is no deviation {deviation_id} in study {study_id}.")
    node = session.get(Node, deviation.node_id)
    assert node is not None  # a deviation's node is a foreign key
    outline = node_outline(session, deviation.node_id)
    index = [d.id for d in outline.deviations].index(deviation_id) + 1
    prefix = f"{node.number or node.id}.{index}"
    rows = outline.scenarios.get(deviation_id, [])
    start = max(0, start)
    end = min(len(rows), start + ROWS_PER_PART)
    numbered = [(row, f"{prefix}.{at + 1}") for at, row in enumerate(rows[start:end], start)]
    categories = fetch_rows_of_study(session, SeverityCategory, study_id)
    slims = slim_scenarios(session, study_id, numbered, categories)
    return RowsPart(study_id, deviation.node_id, tuple(slims[row.id] for row, _ in numbered),
                    more_rows(deviation_id, prefix, len(rows), end))


def more_rows(deviation_id: int, prefix: str, total: int, drawn: int) -> MoreRows | None:
    """What remains of a deviation's rows after the first `drawn` (None when nothing does)."""
    if drawn >= total:
        return None
    last = min(total, drawn + ROWS_PER_PART)
    return MoreRows(deviation_id, drawn, total - drawn, f"{prefix}.{drawn + 1}",
                    f"{prefix}.{last}")


def scenario_number(outline: NodeOutline, node: Node, scenario_id: int) -> str:
    """A scenario's number within its node ("2.3.14")."""
    for d_index, deviation in enumerate(outline.deviations, start=1):
        for s_index, row in enumerate(outline.scenarios.get(deviation.id or 0, []), start=1):
            if row.id == scenario_id:
                return f"{node.number or node.id}.{d_index}.{s_index}"
    raise NotFoundError(f"There is no scenario {scenario_id} in node {node.id}.")
