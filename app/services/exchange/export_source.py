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
from collections.abc import Iterator, Mapping
from dataclasses import dataclass
from typing import Any

from sqlalchemy import bindparam
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
_STEP: Any = (Step.scenario_id, Step.id, Step.kind, Step.description, Step.value,
              Step.value_text, Step.credited, Step.ipl_type, Step.system_tag, Step.sil_claimed,
              Step.response_time_minutes, Step.basis, Step.typical_key)
_SAFEGUARD: Any = (Safeguard.scenario_id, Safeguard.description, Safeguard.note)
# A node's deviations, each with its scenarios (none: one row of nulls) and their stored
# results, in worksheet order: one statement a node, built once. The row is the scenario
# (id, cause, consequence, notes) and its stored row (computed, ..., table_figures) at once.
_NODE_SCENARIOS: Any = (
    select_columns(col(Deviation.id).label("deviation_id"), col(Deviation.guideword),
                   col(Deviation.parameter), col(Scenario.id).label("id"),
                   col(Scenario.cause), col(Scenario.consequence), col(Scenario.notes),
                   col(ScenarioResultRow.scenario_id).label("stored_id"),
                   col(ScenarioResultRow.computed), col(ScenarioResultRow.incomplete),
                   col(ScenarioResultRow.error), col(ScenarioResultRow.category_id),
                   col(ScenarioResultRow.table_figures))
    .select_from(Deviation)
    .outerjoin(Scenario, col(Scenario.deviation_id) == col(Deviation.id))
    .outerjoin(ScenarioResultRow, col(ScenarioResultRow.scenario_id) == col(Scenario.id))
    .where(col(Deviation.node_id) == bindparam("node_id"))
    .order_by(col(Deviation.position), col(Deviation.id), col(Scenario.position),
              col(Scenario.id)))


class MissingStoredResultError(LookupError):
    """A scenario without its stored results where the study is current: a broken invariant
    (see DEVELOPERS.md, Stored results), said rather than computed around."""


def stored_scenarios(session: Session, study_id: int, *, with_rows: bool = True
                     ) -> Iterator[ExportScenario]:
    """Every scenario of the study from plain rows and its stored results, node by node: at
    most one node's rows are held at a time (`with_rows` False: no steps nor safeguards, nor
    the figures' step factors and warnings, for the scenario table alone: the CSV and the
    JSON file's figures, which read what they show of the steps from the stored figures)."""
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
    rows = fetch_plain_rows(session, _NODE_SCENARIOS, {"node_id": node.id})
    ids = [row.id for row in rows if row.id is not None]
    steps, safeguards = _rows_of_scenarios(session, ids, with_rows)
    node_number, node_label = node.number or "(unnumbered)", node_words(node)
    d_index, deviation_id, deviation_label, s_index = 0, None, "", 0
    for row in rows:
        if row.deviation_id != deviation_id:  # the next deviation (its first row)
            d_index, deviation_id, s_index = d_index + 1, row.deviation_id, 0
            deviation_label = deviation_words(row)
        if row.id is None:  # a deviation without scenarios
            continue
        if row.stored_id is None:
            raise MissingStoredResultError(
                f"scenario {row.id} has no stored results although its study is current")
        s_index += 1
        yield ExportScenario(
            f"{node_number}.{d_index}.{s_index}", node_label, deviation_label, row,
            steps[row.id], safeguards[row.id],
            TableFigures.read(row.table_figures, with_steps=with_rows),
            categories.get(row.category_id) if row.computed else None,
            "" if row.computed else _no_figures_words(row))


def _rows_of_scenarios(session: Session, ids: list[int], with_rows: bool) -> tuple[
        dict[int, list[Any]], dict[int, list[Any]]]:
    steps: dict[int, list[Any]] = defaultdict(list)
    safeguards: dict[int, list[Any]] = defaultdict(list)
    if not with_rows:
        return steps, safeguards
    reads: list[tuple[Any, Any, dict[int, list[Any]]]] = [
        (Step, _STEP, steps), (Safeguard, _SAFEGUARD, safeguards)]
    for start in range(0, len(ids), BATCH):
        batch = ids[start:start + BATCH]
        for table, columns, into in reads:
            for row in fetch_plain_rows(session, select_columns(*columns).where(
                    table.scenario_id.in_(batch)).order_by(table.position, table.id)):
                into[row.scenario_id].append(row)
    return steps, safeguards


def _no_figures_words(stored: Any) -> str:
    """As `ScenarioOutcome.no_figures_words` says it for the same scenario."""
    return f"{INCOMPLETE}: {stored.error}" if stored.incomplete else f"not computed: {stored.error}"
