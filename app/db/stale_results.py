"""Which scenarios' stored results a flush made stale, noted by session events.

Every write that can change a scenario's results passes through the ORM session, so these
events note the scenarios concerned in `session.info`; the study core
(`app/services/study/stored_results.py`) recomputes exactly those before the transaction
commits. Nothing here knows the arithmetic: any row that carries a `scenario_id` (a step, a
safeguard, or a table another change adds) marks its scenario, before and after a move; a
scenario marks itself; a severity category marks the scenarios it rates; a deviation moved to
another node marks its scenarios; a study whose default error factors change marks all its
scenarios and an estimate round its step's scenario (the stored uncertainty reads both).
Deleted scenarios (and those a deleted node or deviation takes with it in the database's
cascade) have their stored results read before they go, so their counts can be taken out of
the totals.
"""

from dataclasses import dataclass, field
from typing import Any

from sqlalchemy import inspect, or_, select
from sqlalchemy.orm import Session as OrmSession
from sqlalchemy.orm import UOWTransaction

from app.db.models import (
    ChangeLogEntry,
    Deviation,
    EstimateRound,
    FieldEdit,
    Node,
    ResultTotal,
    Scenario,
    ScenarioResultRow,
    SeverityCategory,
    Step,
    Study,
)

# Any in this module: session events hand over rows of any table model (the ORM boundary).

STALE_KEY = "stale_results"
NOT_INPUTS = (ChangeLogEntry, FieldEdit, ScenarioResultRow, ResultTotal)


@dataclass
class StaleResults:
    """What the transaction changed so far: scenarios to recompute, stored results to remove."""

    scenario_ids: set[int] = field(default_factory=set)
    # Stored rows of deleted scenarios, read before the delete cascades them away.
    removed: dict[int, Any] = field(default_factory=dict)
    # (study id, node id) of deleted nodes: their running totals go with them.
    removed_nodes: set[tuple[int, int]] = field(default_factory=set)

    def __bool__(self) -> bool:
        return bool(self.scenario_ids or self.removed or self.removed_nodes)


def stale_of(session: OrmSession) -> StaleResults:
    """The session's notes (made on first use)."""
    notes: StaleResults = session.info.setdefault(STALE_KEY, StaleResults())
    return notes


def forget(session: OrmSession) -> None:
    """Drop the notes (after they are acted on, or on a rollback)."""
    session.info.pop(STALE_KEY, None)


def _history_values(row: Any, name: str) -> list[Any]:
    """The attribute's value now and, when this flush changes it, before."""
    if name not in inspect(row).attrs:
        return []
    history = inspect(row).attrs[name].history
    return [*history.added, *history.unchanged, *history.deleted]


def _scenario_ids_of(row: Any) -> set[int]:
    if isinstance(row, NOT_INPUTS):
        return set()
    if isinstance(row, Scenario):
        return {row.id} if row.id is not None else set()
    return {v for v in _history_values(row, "scenario_id") if isinstance(v, int)}


def _moved(row: Any, name: str) -> bool:
    return name in inspect(row).attrs and inspect(row).attrs[name].history.has_changes()


def _note_before_flush(session: OrmSession, _flush: UOWTransaction, _instances: Any) -> None:
    notes = stale_of(session)
    deleted = list(session.deleted)
    gone = {row.id for row in deleted if isinstance(row, Scenario) and row.id is not None}
    for row in [*session.dirty, *deleted]:
        notes.scenario_ids.update(_scenario_ids_of(row))
        if isinstance(row, SeverityCategory):
            notes.scenario_ids.update(_rated_by(session, row.id))
        elif isinstance(row, Study) and row not in deleted and _defaults_changed(row):
            notes.scenario_ids.update(_scenarios_where(session, _in_study(row.id)))
        elif isinstance(row, EstimateRound):
            notes.scenario_ids.update(_scenario_of_step(session, row.step_id))
        elif isinstance(row, Deviation) and row not in deleted and _moved(row, "node_id"):
            notes.scenario_ids.update(_scenarios_where(session, Scenario.deviation_id == row.id))
        elif isinstance(row, Deviation) and row in deleted:
            gone.update(_scenarios_where(session, Scenario.deviation_id == row.id))
        elif isinstance(row, Node) and row in deleted and row.id is not None:
            gone.update(_scenarios_where(session, Deviation.node_id == row.id))
            notes.removed_nodes.add((row.study_id, row.id))
    _note_removed(session, notes, gone)


def _note_removed(session: OrmSession, notes: StaleResults, gone: set[int]) -> None:
    stored: Any = ScenarioResultRow
    for scenario_id in sorted(gone - set(notes.removed)):
        row = session.connection().execute(
            select(stored.scenario_id, stored.study_id, stored.node_id, stored.computed,
                   stored.incomplete, stored.short, stored.flagged, stored.short_withdrawn)
            .where(stored.scenario_id == scenario_id)).first()
        if row is not None:
            notes.removed[scenario_id] = dict(row._mapping)
    notes.scenario_ids -= gone


def _rated_by(session: OrmSession, category_id: int | None) -> list[int]:
    table: Any = Scenario
    return _scenarios_where(session, or_(table.severity_category_id == category_id,
                                         table.environment_category_id == category_id,
                                         table.asset_category_id == category_id))


def _scenarios_where(session: OrmSession, condition: Any) -> list[int]:
    table: Any = Scenario
    statement = select(table.id).join(Deviation, Deviation.id == table.deviation_id)
    return list(session.connection().execute(statement.where(condition)).scalars())


def _defaults_changed(study: Study) -> bool:
    """Whether a study's default error factors change (its scenarios' spread reads them)."""
    return any(attr.history.has_changes() for attr in inspect(study).attrs
               if attr.key.startswith("error_factor_default_"))


def _in_study(study_id: int | None) -> Any:
    """The condition 'the scenario is in this study'."""
    table: Any = Scenario
    return table.study_id == study_id


def _scenario_of_step(session: OrmSession, step_id: int | None) -> list[int]:
    """The scenario of an estimate round's step (a round's outcome feeds its error factor)."""
    if step_id is None:
        return []
    table: Any = Step
    return list(session.connection().execute(
        select(table.scenario_id).where(table.id == step_id)).scalars())


def _note_after_flush(session: OrmSession, _flush: UOWTransaction) -> None:
    # New rows have their ids only now; the lists still show what this flush wrote.
    notes = stale_of(session)
    for row in session.new:
        notes.scenario_ids.update(_scenario_ids_of(row))
        if isinstance(row, EstimateRound):
            notes.scenario_ids.update(_scenario_of_step(session, row.step_id))
    notes.scenario_ids -= set(notes.removed)


def _forget_on_rollback(session: OrmSession, _previous: Any) -> None:
    forget(session)


def note_stale_results(listen: Any) -> None:
    """Attach the listeners with `listen(event_name, function)`."""
    listen("before_flush", _note_before_flush)
    listen("after_flush", _note_after_flush)
    listen("after_soft_rollback", _forget_on_rollback)
