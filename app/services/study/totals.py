"""Node and study totals from plain rows: the whole study's figures without building ORM objects.

The worksheet shows one node but the totals of every node and of the whole study. Building
the whole study as ORM objects for that is what made a 10,000-scenario study slow, so this
path selects only the columns the arithmetic reads and computes every scenario through the
same cached arithmetic and the same governing-category rule as the study tree.
"""

from collections import Counter, defaultdict
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from sqlmodel import Session

from app.db.queries import (
    category_targets_of_study,
    fetch_plain_rows,
    scenario_ratings_of_study,
    step_figures_of_study,
)
from app.services.study.completeness import is_incomplete
from app.services.study.listing import NodeTotals, totals_of_results
from app.services.study.results import Assessment, assessment_of_rows, outcome_of

# Any in this module: plain result rows from SQLAlchemy carry no column types (the ORM boundary).

NO_SCENARIOS = totals_of_results([])


@dataclass(frozen=True)
class StudyTotals:
    """Totals of each node (keyed by node id) and of the whole study."""

    by_node: dict[int, NodeTotals] = field(default_factory=dict)
    study: NodeTotals = NO_SCENARIOS

    def of_node(self, node_id: int) -> NodeTotals:
        """One node's totals (zero counts for a node without scenarios)."""
        return self.by_node.get(node_id, NO_SCENARIOS)


def study_totals(session: Session, study_id: int) -> StudyTotals:
    """Every scenario of the study computed from plain rows, summed per node and overall."""
    categories = {row.id: row for row in
                  fetch_plain_rows(session, category_targets_of_study(study_id))}
    steps: dict[int, list[Any]] = defaultdict(list)
    for step in fetch_plain_rows(session, step_figures_of_study(study_id)):
        steps[step.scenario_id].append(step)
    results: dict[int, list[Assessment | None]] = defaultdict(list)
    incomplete: Counter[int] = Counter()
    for scenario in fetch_plain_rows(session, scenario_ratings_of_study(study_id)):
        scenario_steps = tuple(steps[scenario.id])
        results[scenario.node_id].append(
            scenario_assessment(scenario, scenario_steps, categories))
        incomplete[scenario.node_id] += is_incomplete(scenario, scenario_steps)
    return totals_by_node(results, incomplete)


def scenario_assessment(scenario: Any, steps: tuple[Any, ...],
                        categories: Mapping[int, Any]) -> Assessment | None:
    """One scenario's assessment from plain rows (None when it cannot be computed)."""
    return outcome_of(scenario, steps, categories,
                      people_not_rated=bool(scenario.people_not_rated),
                      assessed=assessment_of_rows)[0]


def totals_by_node(results: Mapping[int, Sequence[Assessment | None]],
                   incomplete: Mapping[int, int] | None = None) -> StudyTotals:
    """Sum the results of each node and of all nodes together; `incomplete` counts each
    node's incomplete scenarios (their results are None)."""
    left_out = incomplete or {}
    every = [result for node_results in results.values() for result in node_results]
    return StudyTotals({node_id: totals_of_results(node_results,
                                                   incomplete_count=left_out.get(node_id, 0))
                        for node_id, node_results in results.items()},
                       totals_of_results(every, incomplete_count=sum(left_out.values())))
