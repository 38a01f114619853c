"""The study page (overview): every node's scenario lines and counts, from the stored results.

Nothing is recomputed here: each line's figures are the scalar columns of the scenario's
stored row (`stored_results.stored_rows_in_order`, one SELECT in worksheet order), and the
counts are the running `result_total` rows, so the page costs a read of the study's rows.
"""

from collections import defaultdict
from dataclasses import dataclass
from typing import Any

from sqlmodel import Session

from app.db.models import Node, SeverityCategory, Study
from app.db.queries import fetch_rows_of_study
from app.services.study.listing import NodeTotals
from app.services.study.results import INCOMPLETE
from app.services.study.stored_results import (
    NO_SCENARIOS,
    stored_node_totals,
    stored_rows_in_order,
)
from app.services.study.tree import get_study

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
    """One node of the study page with its scenario lines and counts."""

    node: Node
    rows: tuple[OverviewRow, ...]
    totals: NodeTotals


@dataclass(frozen=True)
class StudyOverview:
    """Display-ready data for the study page, from the stored results (nothing recomputed)."""

    study: Study
    categories: list[SeverityCategory]
    nodes: tuple[OverviewNode, ...]
    study_totals: NodeTotals



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


def read_study_overview(*, session: Session, study_id: int) -> StudyOverview:
    """The study page's nodes, scenario lines and counts, read from the stored results."""
    study = get_study(session, study_id)
    categories = fetch_rows_of_study(session, SeverityCategory, study_id)
    by_id: dict[int | None, SeverityCategory] = {c.id: c for c in categories}
    lines: dict[int, list[OverviewRow]] = defaultdict(list)
    for row in stored_rows_in_order(session, study_id):
        lines[row.node_id].append(_overview_row(row, by_id))
    by_node, study_totals = stored_node_totals(session, study_id)
    nodes = tuple(OverviewNode(node, tuple(lines[node.id or 0]),
                               by_node.get(node.id or 0, NO_SCENARIOS))
                  for node in fetch_rows_of_study(session, Node, study_id))
    return StudyOverview(study, categories, nodes, study_totals)
