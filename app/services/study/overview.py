"""The study page (overview): each node's counts and summary, and its scenario lines.

Nothing is recomputed here: the counts are the running `result_total` rows, the summaries (SIL
bands needed, worst gap) two grouped SELECTs over `scenario_result`, and each line's figures
the scalar columns of the scenario's stored row. A study of up to INLINE_LIMIT scenarios shows
every line under its node, as a small study's team expects; a larger one shows each node's
summary and opens a node's lines on demand, LINES_PAGE at a time (`read_node_lines`).
"""

from collections import defaultdict
from dataclasses import dataclass
from typing import Any

from sqlmodel import Session

from app.db.models import Node, SeverityCategory, Study
from app.db.queries import fetch_rows_of_study
from app.services.study.listing import NodeTotals
from app.services.study.result_figures import SIL_BANDS
from app.services.study.results import INCOMPLETE
from app.services.study.stored_results import (
    NO_SCENARIOS,
    node_summaries,
    stored_node_totals,
    stored_rows_in_order,
    stored_rows_of_node,
)
from app.services.study.tree import NotFoundError, get_study

INLINE_LIMIT = 200
"""Studies of up to this many scenarios show every line on the overview; larger ones show
each node's summary and open its lines on demand (a page of 10,000 lines helps nobody)."""
LINES_PAGE = 100
"""Lines of one node shown at a time when opened on demand."""

# Any in this module: plain rows from SQLAlchemy carry no column types (the ORM boundary).


@dataclass(frozen=True)
class Headline:
    """A scenario's governing figures as a list shows them (read from its stored row)."""

    mitigated_frequency: float
    tolerable_frequency: float
    ratio: float
    gap_orders: float
    meets_target: bool
    sil_label: str = ""
    demand_mode: str = ""


@dataclass(frozen=True)
class OverviewRow:
    """One scenario line of the study page."""

    scenario_id: int
    deviation_label: str
    cause: str
    consequence: str
    category_name: str
    result: Headline | None
    receptor: str
    withdrawn: Headline | None
    error: str
    incomplete: bool = False

    @property
    def no_figures_words(self) -> str:
        """Why there are no figures, worded as ScenarioOutcome.no_figures_words says it."""
        if self.result is not None:
            return ""
        return f"{INCOMPLETE}: {self.error}" if self.incomplete else f"not computed: {self.error}"


@dataclass(frozen=True)
class OverviewNode:
    """One node of the study page with its counts, its summary and (small studies) its lines."""

    node: Node
    rows: tuple[OverviewRow, ...]
    totals: NodeTotals
    sil_bands: tuple[tuple[str, int], ...] = ()
    """Added functions needed by the node's scenarios short of target, per SIL band."""
    worst_gap: float | None = None
    """The largest gap of its computed scenarios, in orders of magnitude."""


@dataclass(frozen=True)
class StudyOverview:
    """Display-ready data for the study page, from the stored results (nothing recomputed)."""

    study: Study
    categories: list[SeverityCategory]
    nodes: tuple[OverviewNode, ...]
    study_totals: NodeTotals
    inline: bool = True
    """Every line shown under its node (a study of up to INLINE_LIMIT scenarios)."""


def _overview_row(row: Any, categories: dict[int | None, SeverityCategory]) -> OverviewRow:
    result = withdrawn = None
    if row.computed:
        result = Headline(row.mitigated_frequency, row.tolerable_frequency, row.ratio,
                          row.gap_orders, not row.short, row.sil_label, row.demand_mode)
    if row.flagged:
        withdrawn = Headline(row.withdrawn_mitigated_frequency, row.tolerable_frequency,
                             row.withdrawn_ratio, 0.0, not row.short_withdrawn)
    category = categories.get(row.category_id)
    return OverviewRow(row.id, f"{row.guideword} {row.parameter}", row.cause, row.consequence,
                       category.name if category else "", result, row.receptor, withdrawn,
                       row.error, bool(row.incomplete))


def _lines_of_study(session: Session, study_id: int,
                    by_id: dict[int | None, SeverityCategory]) -> dict[int, list[OverviewRow]]:
    lines: dict[int, list[OverviewRow]] = defaultdict(list)
    for row in stored_rows_in_order(session, study_id):
        lines[row.node_id].append(_overview_row(row, by_id))
    return lines


def read_study_overview(*, session: Session, study_id: int,
                        inline_limit: int | None = None) -> StudyOverview:
    """The study page's nodes, counts, summaries and (small studies) scenario lines."""
    study = get_study(session, study_id)
    categories = fetch_rows_of_study(session, SeverityCategory, study_id)
    by_id: dict[int | None, SeverityCategory] = {c.id: c for c in categories}
    by_node, study_totals = stored_node_totals(session, study_id)
    inline = study_totals.scenario_count <= (INLINE_LIMIT if inline_limit is None
                                             else inline_limit)
    lines = _lines_of_study(session, study_id, by_id) if inline else {}
    bands, worst = node_summaries(session, study_id)
    nodes = tuple(OverviewNode(
        node, tuple(lines.get(node.id or 0, ())), by_node.get(node.id or 0, NO_SCENARIOS),
        tuple((band, bands.get(node.id or 0, {}).get(band, 0)) for band in SIL_BANDS
              if bands.get(node.id or 0, {}).get(band)),
        worst.get(node.id or 0))
        for node in fetch_rows_of_study(session, Node, study_id))
    return StudyOverview(study, categories, nodes, study_totals, inline)


@dataclass(frozen=True)
class NodeLines:
    """One page of one node's scenario lines, opened from the overview."""

    study: Study
    node: Node
    rows: tuple[OverviewRow, ...]
    start: int
    total: int

    @property
    def end(self) -> int:
        """One past the last line shown."""
        return self.start + len(self.rows)

    @property
    def more(self) -> int:
        """Lines after this page."""
        return self.total - self.end

    @property
    def previous_start(self) -> int:
        """Where the page before this one starts."""
        return max(0, self.start - LINES_PAGE)

    @property
    def next_count(self) -> int:
        """Lines the next page shows."""
        return min(self.more, LINES_PAGE)


def read_node_lines(*, session: Session, study_id: int, node_id: int,
                    start: int = 0) -> NodeLines:
    """LINES_PAGE lines of one node from `start` (past the end: its last page)."""
    study = get_study(session, study_id)
    node = session.get(Node, node_id)
    if node is None or node.study_id != study_id:
        raise NotFoundError(f"There is no node {node_id} in study {study_id}.")
    by_node, _ = stored_node_totals(session, study_id)
    total = by_node.get(node_id, NO_SCENARIOS).scenario_count
    last = max(0, (total - 1) // LINES_PAGE * LINES_PAGE)
    first = min(max(0, start) // LINES_PAGE * LINES_PAGE, last)
    by_id: dict[int | None, SeverityCategory] = {
        c.id: c for c in fetch_rows_of_study(session, SeverityCategory, study_id)}
    rows = tuple(_overview_row(row, by_id) for row in stored_rows_of_node(
        session, study_id, node_id, first, LINES_PAGE))
    return NodeLines(study, node, rows, first, total)
