"""The study as the spreadsheet exports read it: one scenario at a time, in worksheet order.

`stored_scenarios` reads plain rows one node at a time (never the whole study as objects) and
takes each scenario's figures from its stored results (`scenario_result`, kept true on every
save): what the tables show of the results is stored flat (`scenario_result.table_figures`:
the results, the uncertainty spread of issue 13, each step's EF and the IPL-check warnings),
so nothing is computed per scenario here. `tree_scenarios` gives the same records from a
computed study tree, the from-scratch path the report and the tests use; the two must give
identical tables (`tests/services/exchange/test_exports_stored_path.py`).
"""

from collections import defaultdict
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass
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
from app.services.study.results import INCOMPLETE, warnings_of
from app.services.study.stored_results import ensure_current
from app.services.study.table_figures import TableFigures, table_figures
from app.services.study.tree import StudyTree

BATCH = 500  # scenario ids per IN list


@dataclass
class ExportScenario:
    """One scenario as every export table reads it: where it is, its rows, its figures.

    `scenario`, `steps` and `safeguards` are ORM objects or plain rows (read by attribute);
    `figures` is what the tables show of its results (`figures.result` None: no figures,
    `no_figures_words` says why), the same record whether read from the stored row or built
    from a computed tree.
    """

    number: str
    node_label: str
    deviation_label: str
    scenario: Any
    steps: list[Any]
    safeguards: list[Any]
    figures: TableFigures
    category: Any
    no_figures_words: str = ""


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
                figures = table_figures(item.steps, assessment,
                                        item.spread if assessment else None,
                                        warnings_of(item.steps))
                yield ExportScenario(
                    f"{node_number}.{d_index}.{s_index}", node_words(node_branch.node),
                    deviation_words(deviation_branch.deviation), item.scenario, item.steps,
                    item.safeguards, figures, outcome.governing_category,
                    outcome.no_figures_words)


# Only the columns the tables show (a whole-row read spent a fifth of the CSV's time turning
# timestamps it never writes into datetimes). Any: ORM attributes as columns.
_DEVIATION: Any = (Deviation.id, Deviation.guideword, Deviation.parameter)
_SCENARIO: Any = (Scenario.id, Scenario.deviation_id, Scenario.cause, Scenario.consequence,
                  Scenario.notes)
_STEP: Any = (Step.scenario_id, Step.id, Step.kind, Step.description, Step.value,
              Step.value_text, Step.credited, Step.ipl_type, Step.system_tag, Step.sil_claimed,
              Step.response_time_minutes, Step.basis, Step.typical_key)
_SAFEGUARD: Any = (Safeguard.scenario_id, Safeguard.description, Safeguard.note)
_STORED: Any = (ScenarioResultRow.scenario_id, ScenarioResultRow.computed,
                ScenarioResultRow.incomplete, ScenarioResultRow.error,
                ScenarioResultRow.category_id, ScenarioResultRow.table_figures)


def stored_scenarios(session: Session, study_id: int, *, with_rows: bool = True
                     ) -> Iterator[ExportScenario]:
    """Every scenario of the study from plain rows and its stored results, node by node: at
    most one node's rows are held at a time (`with_rows` False: no steps nor safeguards, for
    the CSV, whose scenario table reads them from the stored figures)."""
    ensure_current(session, study_id)
    categories = {c.id: c for c in fetch_rows_of_study(session, SeverityCategory, study_id)
                  if c.id is not None}
    nodes = fetch_plain_rows(session, select_columns(Node.id, Node.number, Node.name)  # type: ignore[call-overload]
                             .where(Node.study_id == study_id)
                             .order_by(Node.position, Node.id))
    for node in nodes:
        yield from _node_scenarios(session, node, categories, with_rows)


def _node_scenarios(session: Session, node: Any, categories: Mapping[int, SeverityCategory],
                    with_rows: bool) -> Iterator[ExportScenario]:
    deviations = fetch_plain_rows(session, select_columns(*_DEVIATION).where(
        col(Deviation.node_id) == node.id).order_by(col(Deviation.position), col(Deviation.id)))
    scenarios = _grouped(fetch_plain_rows(session, select_columns(*_SCENARIO).join(
        Deviation, col(Deviation.id) == col(Scenario.deviation_id)).where(
        col(Deviation.node_id) == node.id).order_by(col(Scenario.position), col(Scenario.id))),
        "deviation_id")
    ids = [s.id for d in deviations for s in scenarios[d.id]]
    steps, safeguards, stored = _rows_of_scenarios(session, ids, with_rows)
    node_number, node_label = node.number or "(unnumbered)", node_words(node)
    for d_index, deviation in enumerate(deviations, start=1):
        deviation_label = deviation_words(deviation)
        for s_index, scenario in enumerate(scenarios[deviation.id], start=1):
            row = stored[scenario.id]
            yield ExportScenario(
                f"{node_number}.{d_index}.{s_index}", node_label, deviation_label, scenario,
                steps[scenario.id], safeguards[scenario.id], TableFigures.read(row.table_figures),
                categories.get(row.category_id) if row.computed else None,
                "" if row.computed else _no_figures_words(row))


def _rows_of_scenarios(session: Session, ids: list[int], with_rows: bool) -> tuple[
        dict[int, list[Any]], dict[int, list[Any]], dict[int, Any]]:
    steps: dict[int, list[Any]] = defaultdict(list)
    safeguards: dict[int, list[Any]] = defaultdict(list)
    stored: dict[int, Any] = {}
    reads: list[tuple[Any, Any, dict[int, list[Any]]]] = [
        (Step, _STEP, steps), (Safeguard, _SAFEGUARD, safeguards)] if with_rows else []
    for start in range(0, len(ids), BATCH):
        batch = ids[start:start + BATCH]
        for table, columns, into in reads:
            for row in fetch_plain_rows(session, select_columns(*columns).where(
                    table.scenario_id.in_(batch)).order_by(table.position, table.id)):
                into[row.scenario_id].append(row)
        for row in fetch_plain_rows(session, select_columns(*_STORED).where(
                col(ScenarioResultRow.scenario_id).in_(batch))):
            stored[row.scenario_id] = row
    return steps, safeguards, stored


def _grouped(rows: Iterable[Any], key: str) -> dict[int, list[Any]]:
    grouped: dict[int, list[Any]] = defaultdict(list)
    for row in rows:
        grouped[getattr(row, key)].append(row)
    return grouped


def _no_figures_words(stored: Any) -> str:
    """As `ScenarioOutcome.no_figures_words` says it for the same scenario."""
    return f"{INCOMPLETE}: {stored.error}" if stored.incomplete else f"not computed: {stored.error}"
