"""The study as the spreadsheet exports read it: one scenario at a time, in worksheet order.

`stored_scenarios` reads plain rows one node at a time (never the whole study as objects) and
takes each scenario's figures from its stored results (`scenario_result`, kept true on every
save); only what no stored row holds is computed per scenario as the rows go by: the
uncertainty spread (issue 13) and the IPL-check warnings. `tree_scenarios` gives the same
records from a computed study tree, the from-scratch path the report and the tests use; the
two must give identical tables (`tests/services/exchange/test_exports_stored_path.py`).
"""

from collections import defaultdict
from collections.abc import Callable, Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any

from sqlalchemy import select as select_columns
from sqlmodel import Session, col

from app.db.models import (
    Deviation,
    Node,
    Safeguard,
    Scenario,
    ScenarioResultRow,
    SeverityCategory,
    Step,
)
from app.db.queries import fetch_plain_rows, fetch_rows_of_study
from app.likelihood.check_base import CheckWarning
from app.likelihood.receptors import ReceptorAssessment, ReceptorLine
from app.likelihood.types import Receptor, ScenarioResult
from app.services.study.result_figures import StoredResult
from app.services.study.results import INCOMPLETE, receptor_categories, targets_of, warnings_of
from app.services.study.spread import (
    ErrorFactorInputs,
    ScenarioSpread,
    load_error_factor_inputs,
    scenario_spread,
)
from app.services.study.stored_results import ensure_current
from app.services.study.tree import StudyTree, get_study

BATCH = 500  # scenario ids per IN list


@dataclass
class ExportScenario:
    """One scenario as every export table reads it: where it is, its rows, its figures.

    `scenario`, `steps` and `safeguards` are ORM objects or plain rows (read by attribute);
    `result` is the governing result as credited (None: no figures, `no_figures_words` says
    why), `lines` every rated receptor's line, `withdrawn` the result with flagged credits
    withdrawn (None when no check doubts a credit).
    """

    number: str
    node_label: str
    deviation_label: str
    scenario: Any
    steps: list[Any]
    safeguards: list[Any]
    result: ScenarioResult | None
    category: Any
    lines: tuple[ReceptorLine, ...] = ()
    governing: Receptor | None = None
    withdrawn: ScenarioResult | None = None
    withdrawn_labels: tuple[str, ...] = ()
    no_figures_words: str = ""
    spread_source: Callable[[], ScenarioSpread | None] | None = field(default=None, repr=False)

    @cached_property
    def spread(self) -> ScenarioSpread | None:
        """The governing line's lognormal, worked out once when a table first needs it."""
        return self.spread_source() if self.spread_source else None

    @cached_property
    def warnings(self) -> list[CheckWarning]:
        """The IPL-check warnings (never stored: only the workbook and the report list them)."""
        return warnings_of(self.steps)


def node_words(node: Any) -> str:
    """'1 · Feed drum'."""
    return f"{node.number} · {node.name}"


def deviation_words(deviation: Any) -> str:
    """'More Level'."""
    return f"{deviation.guideword} {deviation.parameter}"


def tree_scenarios(tree: StudyTree) -> Iterator[ExportScenario]:
    """Every scenario of a computed study tree (the from-scratch path), in worksheet order."""
    for node_branch in tree.nodes:
        node_number = node_branch.node.number or "(unnumbered)"
        for d_index, deviation_branch in enumerate(node_branch.deviations, start=1):
            for s_index, item in enumerate(deviation_branch.scenarios, start=1):
                outcome, assessment = item.outcome, item.outcome.assessment
                credited = assessment.as_credited if assessment else None
                yield ExportScenario(
                    f"{node_number}.{d_index}.{s_index}", node_words(node_branch.node),
                    deviation_words(deviation_branch.deviation), item.scenario, item.steps,
                    item.safeguards, outcome.result if assessment else None,
                    outcome.governing_category,
                    credited.receptors.lines if credited else (),
                    credited.governing.receptor if credited else None,
                    assessment.withdrawn.result if assessment and assessment.withdrawn else None,
                    assessment.withdrawn_labels if assessment else (),
                    outcome.no_figures_words, lambda item=item: item.spread)  # type: ignore[misc]


@dataclass(frozen=True)
class _StudyContext:
    categories: Mapping[int, SeverityCategory]
    inputs: ErrorFactorInputs


def stored_scenarios(session: Session, study_id: int) -> Iterator[ExportScenario]:
    """Every scenario of the study from plain rows and its stored results, node by node: at
    most one node's rows are held at a time."""
    ensure_current(session, study_id)
    study = get_study(session, study_id)
    context = _StudyContext(
        {c.id: c for c in fetch_rows_of_study(session, SeverityCategory, study_id)
         if c.id is not None},
        load_error_factor_inputs(session, study))
    nodes = fetch_plain_rows(session, select_columns(Node.id, Node.number, Node.name)  # type: ignore[call-overload]
                             .where(Node.study_id == study_id)
                             .order_by(Node.position, Node.id))
    for node in nodes:
        yield from _node_scenarios(session, node, context)


def _plain(model: type[Any]) -> Any:
    table: Any = model
    return select_columns(*table.__table__.columns)


def _node_scenarios(session: Session, node: Any, context: _StudyContext
                    ) -> Iterator[ExportScenario]:
    deviations = fetch_plain_rows(session, _plain(Deviation).where(
        col(Deviation.node_id) == node.id).order_by(col(Deviation.position), col(Deviation.id)))
    scenarios = _grouped(fetch_plain_rows(session, _plain(Scenario).join(
        Deviation, col(Deviation.id) == col(Scenario.deviation_id)).where(
        col(Deviation.node_id) == node.id).order_by(col(Scenario.position), col(Scenario.id))),
        "deviation_id")
    ids = [s.id for d in deviations for s in scenarios[d.id]]
    steps, safeguards, stored = _rows_of_scenarios(session, ids)
    node_number = node.number or "(unnumbered)"
    for d_index, deviation in enumerate(deviations, start=1):
        for s_index, scenario in enumerate(scenarios[deviation.id], start=1):
            yield _stored_scenario(
                f"{node_number}.{d_index}.{s_index}", node_words(node),
                deviation_words(deviation), scenario, steps[scenario.id],
                safeguards[scenario.id], StoredResult.of_row(stored[scenario.id]), context)


def _rows_of_scenarios(session: Session, ids: list[int]) -> tuple[
        dict[int, list[Any]], dict[int, list[Any]], dict[int, Any]]:
    steps: dict[int, list[Any]] = defaultdict(list)
    safeguards: dict[int, list[Any]] = defaultdict(list)
    stored: dict[int, Any] = {}
    for start in range(0, len(ids), BATCH):
        batch = ids[start:start + BATCH]
        for model, into in ((Step, steps), (Safeguard, safeguards)):
            table: Any = model
            for row in fetch_plain_rows(session, _plain(model).where(
                    table.scenario_id.in_(batch)).order_by(table.position, table.id)):
                into[row.scenario_id].append(row)
        for row in fetch_plain_rows(session, _plain(ScenarioResultRow).where(
                col(ScenarioResultRow.scenario_id).in_(batch))):
            stored[row.scenario_id] = row
    return steps, safeguards, stored


def _grouped(rows: Iterable[Any], key: str) -> dict[int, list[Any]]:
    grouped: dict[int, list[Any]] = defaultdict(list)
    for row in rows:
        grouped[getattr(row, key)].append(row)
    return grouped


def _no_figures_words(scenario: Any, stored: Any) -> str:
    """As `ScenarioOutcome.no_figures_words` says it for the same scenario."""
    return f"{INCOMPLETE}: {stored.error}" if stored.incomplete else f"not computed: {stored.error}"


def _stored_scenario(number: str, node_label: str, deviation_label: str, scenario: Any,
                     steps: list[Any], safeguards: list[Any], stored: StoredResult,
                     context: _StudyContext) -> ExportScenario:
    credited = stored.credited
    if credited is None:
        return ExportScenario(number, node_label, deviation_label, scenario, steps, safeguards,
                              None, None, no_figures_words=_no_figures_words(scenario, stored))
    lines = tuple(stored_line.line for stored_line in credited.lines)
    withdrawn = stored.withdrawn
    return ExportScenario(
        number, node_label, deviation_label, scenario, steps, safeguards, credited.result,
        context.categories.get(credited.category_id), lines, credited.governing,
        withdrawn.result if withdrawn else None, stored.withdrawn_labels,
        spread_source=lambda: _spread(scenario, steps, lines, credited.governing, context))


def _spread(scenario: Any, steps: list[Any], lines: tuple[ReceptorLine, ...],
            governing: Receptor, context: _StudyContext) -> ScenarioSpread | None:
    """The spread around the stored lines (the medians and verdicts are not computed again)."""
    rated = receptor_categories(scenario, context.categories,
                                people_not_rated=scenario.people_not_rated)
    line = next(x for x in lines if x.receptor is governing)
    return scenario_spread(steps, targets_of(rated), context.inputs,
                           ReceptorAssessment(lines, line, ()), remember=False)
