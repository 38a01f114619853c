"""Stored per-scenario results and running node and study counts, kept in the edit's transaction.

Every transaction that changes a scenario's inputs recomputes that scenario alone before it
commits (the session events in `app/db/stale_results.py` note which), replaces its row in
`scenario_result`, and moves its node's and its study's running counts in `result_total` by
the difference. Reading the totals is then two rows, whatever the study's size; the overview
and the risk picture read the stored rows instead of recomputing the study.

Invariant: for a study whose `result_total` row (node 0) carries RESULTS_VERSION, every
scenario has exactly one stored row equal to what `scenario_columns` computes from its current
inputs, and each count equals the recount of the stored rows. A study without that row (just
imported, or stored by older code) is rebuilt whole on its next read. Raise RESULTS_VERSION
when what a scenario's stored row holds changes, so older stored rows are rebuilt.
"""

from collections import defaultdict
from collections.abc import Iterable, Mapping
from typing import Any

from sqlalchemy import bindparam, delete, event, exists, func, insert, select, update
from sqlalchemy.orm import Session as OrmSession
from sqlmodel import Session

from app.db.models import Deviation, ResultTotal, Scenario, ScenarioResultRow, Study
from app.db.queries import (
    CATEGORY_TARGETS,
    RATINGS_OF_SCENARIOS,
    STEP_FIGURES_OF_SCENARIOS,
    fetch_plain_rows,
    scenario_ratings_of_study,
    step_figures_of_study,
)
from app.db.stale_results import forget, note_stale_results, stale_of
from app.services.study.bulk_results import PlainRows, StudyInputs, compute_scenarios
from app.services.study.listing import NodeTotals
from app.services.study.result_figures import scenario_columns
from app.services.study.spread import (
    NO_INPUTS,
    ErrorFactorInputs,
    forget_refreshed_inputs,
    load_error_factor_inputs,
    load_scenario_inputs,
    remember_refreshed_inputs,
)

# Any in this module: plain rows from SQLAlchemy carry no column types (the ORM boundary).

RESULTS_VERSION = 3  # 2: the risk picture's fields (band, withdrawn, warnings, spread);
# 3: what the spreadsheet exports show (table_figures)
STUDY_ROW = 0  # result_total.node_id of a study's own counts
BATCH = 500  # ids per IN list
COUNTS = ("scenario_count", "short_count", "unresolved_count", "flagged_count",
          "short_withdrawn_count", "incomplete_count")


def counts_of(row: Any) -> dict[str, int]:
    """What one stored scenario row adds to its node's and study's counts (an incomplete
    scenario only to the scenarios and the incomplete ones: services/study/completeness.py)."""
    return {"scenario_count": 1, "short_count": int(row["short"]),
            "unresolved_count": int(not row["computed"] and not row["incomplete"]),
            "flagged_count": int(row["flagged"]),
            "short_withdrawn_count": int(row["short_withdrawn"]),
            "incomplete_count": int(row["incomplete"])}


def _batches(ids: Iterable[int]) -> list[list[int]]:
    ordered = sorted(ids)
    return [ordered[i:i + BATCH] for i in range(0, len(ordered), BATCH)]


def _categories(session: Session, study_id: int) -> dict[int, Any]:
    return {row.id: row for row in fetch_plain_rows(session, CATEGORY_TARGETS,
                                                    {"study_id": study_id})}


def _inputs_of(session: Session, study_id: int, steps: Iterable[Any]) -> ErrorFactorInputs:
    """What the error factors read besides the steps: the study's defaults and these steps'
    last revealed or agreed rounds (only theirs: an edit reads its own scenario's)."""
    step_ids = sorted(step.id for step in steps)
    inputs = load_scenario_inputs(session, study_id, step_ids)
    if inputs is None:
        return NO_INPUTS
    remember_refreshed_inputs(session, study_id, step_ids, inputs)
    return inputs


def compute_rows(session: Session, scenario_ids: Iterable[int]) -> dict[int, dict[str, Any]]:
    """The stored-row columns of a few scenarios, read from their own rows only."""
    computed: dict[int, dict[str, Any]] = {}
    categories: dict[int, dict[int, Any]] = {}
    for batch in _batches(scenario_ids):
        steps: dict[int, list[Any]] = defaultdict(list)
        for step in fetch_plain_rows(session, STEP_FIGURES_OF_SCENARIOS,
                                     {"scenario_ids": batch}):
            steps[step.scenario_id].append(step)
        ratings = fetch_plain_rows(session, RATINGS_OF_SCENARIOS, {"scenario_ids": batch})
        inputs = {study_id: _inputs_of(session, study_id, [
            step for rating in ratings if rating.study_id == study_id
            for step in steps[rating.id]]) for study_id in {r.study_id for r in ratings}}
        for rating in ratings:
            if rating.study_id not in categories:
                categories[rating.study_id] = _categories(session, rating.study_id)
            computed[rating.id] = {
                "scenario_id": rating.id, "study_id": rating.study_id,
                "node_id": rating.node_id,
                **scenario_columns(rating, tuple(steps[rating.id]), categories[rating.study_id],
                                   inputs[rating.study_id])}
    return computed


def compute_study_rows(session: Session, study_id: int) -> dict[int, dict[str, Any]]:
    """Every scenario of one study computed from plain rows (the from-scratch path)."""
    steps: dict[int, list[Any]] = defaultdict(list)
    for step in fetch_plain_rows(session, step_figures_of_study(study_id)):
        steps[step.scenario_id].append(step)
    study = session.get(Study, study_id)
    inputs = load_error_factor_inputs(session, study) if study is not None else NO_INPUTS
    categories = fetch_plain_rows(session, CATEGORY_TARGETS, {"study_id": study_id})
    return compute_scenarios(StudyInputs(study_id, PlainRows.of(categories), inputs),
                             fetch_plain_rows(session, scenario_ratings_of_study(study_id)),
                             steps)


class Moves:
    """How a transaction moves the counts of each (study, node) and each study."""

    def __init__(self) -> None:
        self.by_key: dict[tuple[int, int], dict[str, int]] = {}

    def count(self, row: Mapping[str, Any], sign: int) -> None:
        """Count a stored row in (sign 1) or out (sign -1) of its node and its study."""
        for key in ((row["study_id"], row["node_id"]), (row["study_id"], STUDY_ROW)):
            held = self.by_key.setdefault(key, dict.fromkeys(COUNTS, 0))
            for name, value in counts_of(row).items():
                held[name] += sign * value

    def changed(self) -> dict[tuple[int, int], dict[str, int]]:
        """The moves that change something."""
        return {key: moves for key, moves in self.by_key.items() if any(moves.values())}


def refresh_stale_results(session: Session) -> None:
    """Recompute the scenarios this transaction changed and move the counts (before commit)."""
    session.flush()
    forget_refreshed_inputs(session)
    notes = stale_of(session)
    if not notes:
        return
    forget(session)
    held, current = _lock_stored(session, notes.scenario_ids)
    fresh = compute_rows(session, notes.scenario_ids)
    studies = {row["study_id"] for row in [*fresh.values(), *notes.removed.values()]}
    current |= _current_studies(session, studies - {row["study_id"] for row in held})
    moves = Moves()
    for row in [*held, *notes.removed.values()]:
        if row["study_id"] in current:
            moves.count(row, -1)
    written = {sid: row for sid, row in fresh.items() if row["study_id"] in current}
    for row in written.values():
        moves.count(row, 1)
    _write_rows(session, {row["scenario_id"] for row in held}, written)
    _move_counts(session, {key: move for key, move in moves.changed().items()
                           if key not in notes.removed_nodes})
    _drop_node_counts(session, notes.removed_nodes)


_STORED: Any = ScenarioResultRow
_TOTALS: Any = ResultTotal
# Built once: the stored rows of some scenarios, locked, each saying whether its study's stored
# results are current (so a keystroke asks that in the same statement).
_LOCK_STORED = (
    select(_STORED.scenario_id, _STORED.study_id, _STORED.node_id, _STORED.computed,
           _STORED.incomplete, _STORED.short, _STORED.flagged, _STORED.short_withdrawn,
           exists().where(_TOTALS.study_id == _STORED.study_id, _TOTALS.node_id == STUDY_ROW,
                          _TOTALS.results_version == RESULTS_VERSION).label("study_current"))
    .where(_STORED.scenario_id.in_(bindparam("scenario_ids", expanding=True)))
    .with_for_update(of=_STORED))


def _lock_stored(session: Session, scenario_ids: Iterable[int]
                 ) -> tuple[list[dict[str, Any]], set[int]]:
    """The stored rows of these scenarios, locked (PostgreSQL) before their inputs are read,
    so a concurrent edit of the same scenario waits and then computes from committed inputs;
    and which of their studies are current."""
    rows: list[dict[str, Any]] = []
    current: set[int] = set()
    for batch in _batches(scenario_ids):
        for row in session.connection().execute(_LOCK_STORED, {"scenario_ids": batch}):
            stored = dict(row._mapping)
            if stored.pop("study_current"):
                current.add(stored["study_id"])
            rows.append(stored)
    return rows, current


def _current_studies(session: Session, study_ids: set[int]) -> set[int]:
    """The studies whose stored results are complete and written by this code."""
    if not study_ids:
        return set()
    table: Any = ResultTotal
    return set(session.connection().execute(select(table.study_id).where(
        table.study_id.in_(sorted(study_ids)), table.node_id == STUDY_ROW,
        table.results_version == RESULTS_VERSION)).scalars())


_UPDATE_STORED = update(_STORED).where(_STORED.scenario_id == bindparam("key"))


def _write_rows(session: Session, held_ids: set[int],
               fresh: Mapping[int, Mapping[str, Any]]) -> None:
    """Update the rows held (one executemany), insert the new ones, delete those not computed
    (a scenario whose study is being rebuilt)."""
    table: Any = ScenarioResultRow
    updated = [{"key": sid, **row} for sid, row in fresh.items() if sid in held_ids]
    if updated:
        session.connection().execute(_UPDATE_STORED, updated)
    added = [row for sid, row in fresh.items() if sid not in held_ids]
    if added:
        session.connection().execute(insert(table), added)
    for batch in _batches(held_ids - set(fresh)):
        session.connection().execute(delete(table).where(table.scenario_id.in_(batch)))


def _move_counts(session: Session, moves: Mapping[tuple[int, int], Mapping[str, int]]) -> None:
    """Add each move in the UPDATE itself (`count = count + d`), so concurrent moves add up."""
    table: Any = ResultTotal
    for (study_id, node_id), move in sorted(moves.items()):
        moved = session.connection().execute(
            update(table).where(table.study_id == study_id, table.node_id == node_id)
            .values({name: getattr(table, name) + value for name, value in move.items()}))
        if moved.rowcount == 0:  # a node's first scenario
            session.connection().execute(insert(table).values(
                study_id=study_id, node_id=node_id, results_version=RESULTS_VERSION, **move))


def _drop_node_counts(session: Session, nodes: set[tuple[int, int]]) -> None:
    table: Any = ResultTotal
    for study_id, node_id in sorted(nodes):
        session.connection().execute(delete(table).where(
            table.study_id == study_id, table.node_id == node_id))


def rebuild_study_results(session: Session, study_id: int) -> None:
    """Compute every scenario of the study and store its rows and counts (then commit)."""
    session.commit()  # what this session changed is counted through its own notes first
    studies: Any = Study
    session.connection().execute(select(studies.id).where(studies.id == study_id)
                                 .with_for_update())
    if _current_studies(session, {study_id}):
        return  # another request rebuilt it while this one waited
    write_study_results(session, study_id)
    forget(session)
    session.commit()


def write_study_results(session: Session, study_id: int) -> None:
    """Replace the study's stored rows and counts by a computation of every scenario, in the
    session's transaction (an import calls it before its one commit; nothing is committed)."""
    for model in (ScenarioResultRow, ResultTotal):
        table: Any = model
        session.connection().execute(delete(table).where(table.study_id == study_id))
    fresh = compute_study_rows(session, study_id)
    moves = Moves()
    moves.by_key[(study_id, STUDY_ROW)] = dict.fromkeys(COUNTS, 0)
    for row in fresh.values():
        moves.count(row, 1)
    _write_rows(session, set(), fresh)
    session.connection().execute(insert(ResultTotal), [
        {"study_id": s, "node_id": n, "results_version": RESULTS_VERSION, **counts}
        for (s, n), counts in sorted(moves.by_key.items())])


def is_current(session: Session, study_id: int) -> bool:
    """Whether the study's stored results are complete and written by this code."""
    return bool(_current_studies(session, {study_id}))


def ensure_current(session: Session, study_id: int) -> None:
    """Rebuild the study's stored results if they are missing or written by older code."""
    if not is_current(session, study_id):
        rebuild_study_results(session, study_id)


def _totals(row: Any) -> NodeTotals:
    return NodeTotals(**{name: int(getattr(row, name)) for name in COUNTS})


NO_SCENARIOS = NodeTotals(0, 0, 0)


_TOTALS_OF_NODES = select(_TOTALS).where(
    _TOTALS.study_id == bindparam("study_id"),
    _TOTALS.node_id.in_(bindparam("node_ids", expanding=True)))


def stored_totals(session: Session, study_id: int, node_id: int
                  ) -> tuple[NodeTotals, NodeTotals]:
    """The node's and the study's counts from their stored rows (two rows read)."""
    params = {"study_id": study_id, "node_ids": sorted({node_id, STUDY_ROW})}
    rows = {row.node_id: row for row in session.connection().execute(_TOTALS_OF_NODES, params)}
    study_row = rows.get(STUDY_ROW)
    if study_row is None or study_row.results_version != RESULTS_VERSION:
        rebuild_study_results(session, study_id)
        rows = {row.node_id: row
                for row in session.connection().execute(_TOTALS_OF_NODES, params)}
    node = _totals(rows[node_id]) if node_id in rows else NO_SCENARIOS
    return node, _totals(rows[STUDY_ROW])


def stored_node_totals(session: Session, study_id: int) -> tuple[dict[int, NodeTotals],
                                                                 NodeTotals]:
    """Every node's counts (one row per node) and the study's."""
    ensure_current(session, study_id)
    table: Any = ResultTotal
    rows = {row.node_id: _totals(row) for row in session.connection().execute(
        select(table).where(table.study_id == study_id))}
    return {n: t for n, t in rows.items() if n != STUDY_ROW}, rows[STUDY_ROW]


def _refresh_before_commit(session: OrmSession) -> None:
    if isinstance(session, Session):
        refresh_stale_results(session)


def install_stored_results() -> None:
    """Keep stored results true in every ORM session's commits (idempotent)."""
    if not event.contains(OrmSession, "before_commit", _refresh_before_commit):
        event.listen(OrmSession, "before_commit", _refresh_before_commit)
        note_stale_results(lambda name, fn: event.listen(OrmSession, name, fn))


def _headlines(study_id: int) -> Any:
    """Each scenario of the study with its stored headline, in worksheet order (a statement)."""
    stored: Any = ScenarioResultRow
    return (
        select(Scenario.id, Scenario.cause, Scenario.consequence, Deviation.node_id,  # type: ignore[call-overload]
               Deviation.guideword, Deviation.parameter, stored.computed, stored.incomplete,
               stored.error,
               stored.category_id, stored.receptor, stored.mitigated_frequency,
               stored.tolerable_frequency, stored.ratio, stored.gap_orders, stored.short,
               stored.sil_label, stored.demand_mode, stored.flagged, stored.short_withdrawn,
               stored.withdrawn_mitigated_frequency, stored.withdrawn_ratio)
        .join(Deviation, Deviation.id == Scenario.deviation_id)
        .join(stored, stored.scenario_id == Scenario.id)
        .where(Scenario.study_id == study_id)
        .order_by(Deviation.position, Deviation.id, Scenario.position, Scenario.id))


def stored_rows_in_order(session: Session, study_id: int) -> list[Any]:
    """Every scenario of the study with its stored headline, in worksheet order (plain rows)."""
    ensure_current(session, study_id)
    return list(session.connection().execute(_headlines(study_id)))


def stored_rows_of_node(session: Session, study_id: int, node_id: int, start: int,
                        count: int) -> list[Any]:
    """`count` scenarios of one node from the `start`-th, with their stored headlines."""
    ensure_current(session, study_id)
    statement = _headlines(study_id).where(Deviation.node_id == node_id)
    return list(session.connection().execute(statement.offset(start).limit(count)))


def node_summaries(session: Session, study_id: int) -> tuple[dict[int, dict[str, int]],
                                                             dict[int, float]]:
    """Per node: how many scenarios short of target need an added function in each SIL
    band, and the worst gap (largest, orders of magnitude) of its computed scenarios; two
    grouped SELECTs over the stored rows (index on study and node)."""
    ensure_current(session, study_id)
    stored: Any = ScenarioResultRow
    bands: dict[int, dict[str, int]] = defaultdict(dict)
    for node_id, band, count in session.connection().execute(
            select(stored.node_id, stored.sil_band, func.count())
            .where(stored.study_id == study_id, stored.computed, stored.short)
            .group_by(stored.node_id, stored.sil_band)):
        bands[node_id][band] = count
    worst = {node_id: gap for node_id, gap in session.connection().execute(
        select(stored.node_id, func.max(stored.gap_orders))
        .where(stored.study_id == study_id, stored.computed).group_by(stored.node_id))}
    return dict(bands), worst
