"""Version counters and the change log, kept by session events so no write path can skip them."""

from datetime import timedelta
from typing import Any

from sqlalchemy import bindparam, delete, event, insert, inspect, select, update
from sqlalchemy.orm import Session as OrmSession
from sqlalchemy.orm import UOWTransaction

from app.db.models import (
    ChangeLogEntry,
    Deviation,
    Node,
    Participant,
    Recommendation,
    RecommendationScenario,
    Safeguard,
    ScaleWord,
    Scenario,
    SessionDay,
    SeverityCategory,
    Step,
    Study,
    TrackedRow,
    utc_now,
)

# Any in this module: session events hand over any tracked table row and its column values (the
# ORM boundary).

LOGGED_TYPES: dict[type, str] = {
    Study: "study",
    SeverityCategory: "severity category",
    Node: "node",
    Deviation: "deviation",
    Scenario: "scenario",
    Step: "step",
    Safeguard: "safeguard",
    Recommendation: "recommendation",
    Participant: "participant",
    SessionDay: "session date",
    ScaleWord: "word on the scale",
}
UNLOGGED_FIELDS = {"version", "created_at", "updated_at", "focus_scenario_id", "focus_changed_at",
                   "content_version"}
# Keystrokes of one person on one field within this window read as one edit in the log.
COALESCE_WINDOW = timedelta(seconds=60)

AUTHOR_KEY = "author"
SUPPRESS_LOG_KEY = "suppress_change_log"
# Rows (model, id) whose version a compare-and-set has just raised in this session.
CLAIMED_KEY = "claimed_rows"


def describe(row: Any) -> str:
    """A short human label for a logged row."""
    for attribute in ("title", "name", "description", "cause", "text", "word"):
        value = getattr(row, attribute, None)
        if value:
            return f"{LOGGED_TYPES.get(type(row), 'row')} '{str(value)[:80]}'"
    return f"{LOGGED_TYPES.get(type(row), 'row')} #{getattr(row, 'id', '?')}"


def _text(value: Any) -> str | None:
    if value is None:
        return None
    return value.value if hasattr(value, "value") and not isinstance(value, str) else str(value)


def _scenario_of(row: Any) -> int | None:
    if isinstance(row, Scenario):
        return row.id
    return getattr(row, "scenario_id", None)


def _study_of(row: Any) -> int | None:
    return row.id if isinstance(row, Study) else getattr(row, "study_id", None)


def _bump_versions(session: OrmSession, _flush: UOWTransaction, _instances: Any) -> None:
    now = utc_now()
    claimed = session.info.get(CLAIMED_KEY, set())
    _bump_content_versions(session)
    for row in session.dirty:
        if isinstance(row, TrackedRow) and _has_tracked_change(row):
            if (type(row), row.id) in claimed:  # type: ignore[attr-defined]
                continue  # compare_and_set has bumped it already, in its guarded UPDATE
            # `version = version + 1` in the UPDATE itself: the database adds one to the value
            # it holds when the write happens, so two sessions that loaded the same version
            # and commit one after the other end two higher, never one.
            row.version = type(row).__table__.c.version + 1  # type: ignore[attr-defined]
            row.updated_at = now


_STUDIES: Any = Study.__table__  # type: ignore[attr-defined]
# Built once: every edit runs it (building and keying it cost about as much as running it).
_BUMP_CONTENT_VERSIONS = (update(_STUDIES)
                          .where(_STUDIES.c.id.in_(bindparam("study_ids", expanding=True)))
                          .values(content_version=_STUDIES.c.content_version + 1))


def _bump_content_versions(session: OrmSession) -> None:
    """Raise the content version of every study this flush changes, in the same transaction.

    The room view's poll compares this one number (with the focus) instead of scanning tables.
    """
    study_ids: set[int] = set()
    for row in [*session.new, *session.deleted, *session.dirty]:
        if isinstance(row, RecommendationScenario):
            study_ids.add(_study_of_action(session, row.recommendation_id))
        elif isinstance(row, TrackedRow) and (row not in session.dirty
                                              or _has_tracked_change(row)):
            study_id = _study_of(row)
            if study_id is not None:
                study_ids.add(study_id)
    if study_ids:
        session.connection().execute(_BUMP_CONTENT_VERSIONS, {"study_ids": sorted(study_ids)})


def _study_of_action(session: OrmSession, action_id: int) -> int:
    action = session.get(Recommendation, action_id)
    return action.study_id if action is not None else 0


def _has_tracked_change(row: Any) -> bool:
    state = inspect(row)
    return any(
        attr.history.has_changes() for attr in state.attrs if attr.key not in UNLOGGED_FIELDS
    )


def _entry(session: OrmSession, row: Any, action: str, **values: Any) -> dict[str, Any]:
    return {
        "study_id": _study_of(row),
        "at": utc_now(),
        "author": session.info.get(AUTHOR_KEY, ""),
        "action": action,
        "entity": LOGGED_TYPES[type(row)],
        "entity_id": row.id,
        "scenario_id": _scenario_of(row),
        "summary": describe(row),
        # Every entry carries every column: one executemany INSERT takes its columns from the
        # first row, so an edit flushed after a create would otherwise lose its field and values.
        "field": "", "old_value": None, "new_value": None,
        **values,
    }


def _edit_entries(session: OrmSession, row: Any) -> list[dict[str, Any]]:
    entries = []
    for attr in inspect(row).attrs:
        if attr.key in UNLOGGED_FIELDS or not attr.history.has_changes():
            continue
        old = attr.history.deleted[0] if attr.history.deleted else None
        new = attr.history.added[0] if attr.history.added else None
        if _text(old) != _text(new):
            entries.append(
                _entry(session, row, "edit", field=attr.key, old_value=_text(old),
                       new_value=_text(new))
            )
    return entries


_LOG: Any = ChangeLogEntry.__table__  # type: ignore[attr-defined]
# Built once: every keystroke runs them. The newest entries of one row's fields within the
# window (the indexed time bound keeps this cheap), newest first.
_RECENT_OF_ROW = (
    select(_LOG.c.id, _LOG.c.author, _LOG.c.field, _LOG.c.action, _LOG.c.old_value)
    .where(_LOG.c.at >= bindparam("since"), _LOG.c.entity == bindparam("entity"),
           _LOG.c.entity_id == bindparam("entity_id"),
           _LOG.c.field.in_(bindparam("fields", expanding=True)))
    .order_by(_LOG.c.id.desc()))
_FOLD = (update(_LOG).where(_LOG.c.id == bindparam("entry_id"))
         .values(new_value=bindparam("folded_value"), at=bindparam("folded_at")))
_UNDO_FOLD = delete(_LOG).where(_LOG.c.id.in_(bindparam("entry_ids", expanding=True)))


def _coalesce(session: OrmSession, entries: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """Fold keystroke-level edits of one row into the same person's edit of each field a
    moment ago; the entries left are new. One SELECT reads every field's newest entry."""
    if not entries:
        return entries
    first = entries[0]
    connection = session.connection()
    newest: dict[str, Any] = {}
    for row in connection.execute(_RECENT_OF_ROW, {
            "since": first["at"] - COALESCE_WINDOW, "entity": first["entity"],
            "entity_id": first["entity_id"], "fields": sorted({e["field"] for e in entries})}):
        newest.setdefault(row.field, row)
    left, folded, emptied = [], [], []
    for entry in entries:
        latest = newest.get(entry["field"])
        if latest is None or latest.action != "edit" or latest.author != entry["author"]:
            left.append(entry)
        elif latest.old_value == entry["new_value"]:
            emptied.append(latest.id)  # typed away and back (X -> Y -> X): nothing changed
        else:
            folded.append({"entry_id": latest.id, "folded_value": entry["new_value"],
                           "folded_at": entry["at"]})
    if emptied:
        connection.execute(_UNDO_FOLD, {"entry_ids": emptied})
    if folded:
        connection.execute(_FOLD, folded)
    return left


def _record_changes(session: OrmSession, _flush: UOWTransaction) -> None:
    if session.info.get(SUPPRESS_LOG_KEY):
        return
    entries: list[dict[str, Any]] = []
    for row in session.new:
        if type(row) in LOGGED_TYPES:
            entries.append(_entry(session, row, "create"))
    for row in session.dirty:
        if type(row) in LOGGED_TYPES and session.is_modified(row):
            entries.extend(_coalesce(session, _edit_entries(session, row)))
    for row in session.deleted:
        if type(row) in LOGGED_TYPES and not isinstance(row, Study):
            entries.append(_entry(session, row, "delete"))
    entries = [e for e in entries if e["study_id"] is not None]
    if entries:
        session.connection().execute(insert(ChangeLogEntry.__table__), entries)  # type: ignore[attr-defined]


def _keep_old_value(_target: Any, value: Any, _old: Any, _initiator: Any) -> Any:
    return value


def _load_old_values_on_set() -> None:
    # An expired attribute set without being read would lose its old value; an active-history
    # listener makes SQLAlchemy load it first, so the log always has "old -> new".
    for model in LOGGED_TYPES:
        for column in model.__table__.columns:  # type: ignore[attr-defined]
            if column.key not in UNLOGGED_FIELDS:
                attribute = getattr(model, column.key)
                event.listen(attribute, "set", _keep_old_value, active_history=True,
                             retval=True)


def install_tracking() -> None:
    """Attach the version and change-log listeners to every ORM session (idempotent)."""
    if not event.contains(OrmSession, "before_flush", _bump_versions):
        event.listen(OrmSession, "before_flush", _bump_versions)
        event.listen(OrmSession, "after_flush", _record_changes)
        _load_old_values_on_set()
