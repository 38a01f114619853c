"""Saves several people can make at once without losing anyone's words.

A page sends, with each save, the version of the row it was loaded with and the value each
sent field had when loaded (its "original"). `guarded_save` writes through
`app/db/compare_and_set.save_if_version`:

- the row still has that version: saved (a *clean* save: the page has seen every change);
- someone saved the row since: each sent field is compared with what is stored now. A field
  that still holds its original (nobody touched it), already holds the person's value, or
  holds the text this very page wrote last (its own earlier keystroke) is no conflict, and the
  save is retried against the row's present version (a *merged* save). Any other field is a
  conflict: nothing is written and the caller answers 409 with the other person's value, who
  saved it and when (from the change log);
- the row is gone: `gone_row` says who deleted it and when, and whether undo can bring it back.

The keystroke guard (`claim_keystroke`) is a per-field sequence in `field_edit`, compared and
set with one guarded UPDATE in the same transaction as the value, so an older keystroke never
overwrites a newer one whichever worker serves it.
"""

import json
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field, replace
from datetime import datetime
from enum import Enum
from typing import Any

from sqlalchemy import bindparam, insert, update
from sqlalchemy import select as table_select
from sqlalchemy.exc import IntegrityError
from sqlmodel import Session, col, select

from app.db.compare_and_set import SaveOutcome, save_if_version
from app.db.models import ChangeLogEntry, DeletedItem, FieldEdit, TrackedRow
from app.db.tracking import AUTHOR_KEY, LOGGED_TYPES, describe
from app.services.study.tree import NotFoundError

# Any in this module: a guarded row is any tracked table model and its field values are of any
# column type (the ORM boundary).

# A merged save retries against the row's present version; a row saved this often in between
# is reported as a conflict rather than retried for ever.
MERGE_ATTEMPTS = 5
RESOLUTION_ACTION = "conflict"  # change-log action of a "keep mine" / "take theirs" choice
KEEP_MINE, TAKE_THEIRS = "keep", "take"  # the two answers to a conflict


@dataclass(frozen=True)
class PageEdit:
    """What the page knew when it sent the save."""

    version: int | None = None  # None: a client that sends no version (scripts) saves as is
    originals: Mapping[str, Any] = field(default_factory=dict)  # field -> value when loaded
    client: str = ""  # the page's random id (live edits only)
    seq: int | None = None  # its sequence number for this field


@dataclass(frozen=True)
class FieldConflict:
    """One field someone else changed since the page loaded it."""

    field: str
    theirs: str
    mine: str
    author: str
    at: datetime | None
    version: int  # the row's version now: "keep mine" saves against it
    # How the page names the values when that is not the value itself (a category's name for
    # its id); the forms still send the values.
    theirs_label: str = ""
    mine_label: str = ""

    @property
    def shown_theirs(self) -> str:
        """The other person's value as the page shows it."""
        return self.theirs_label or self.theirs

    @property
    def shown_mine(self) -> str:
        """The person's own value as the page shows it."""
        return self.mine_label or self.mine

    def named(self, names: Mapping[str, str]) -> "FieldConflict":
        """The same conflict with both values shown by their names (unknown values as they are)."""
        return replace(self, theirs_label=names.get(self.theirs, ""),
                       mine_label=names.get(self.mine, ""))


class ConflictError(Exception):
    """Someone saved the same fields of a row since the page loaded it (409): nothing saved."""

    def __init__(self, conflicts: tuple[FieldConflict, ...]) -> None:
        super().__init__("changed since the page was loaded")
        self.conflicts = conflicts


@dataclass(frozen=True)
class GoneRow:
    """A row that no longer exists: who deleted it, when, and whether undo can bring it back."""

    entity: str
    author: str
    at: datetime | None
    undoable: bool

    @property
    def sentence(self) -> str:
        """'This participant was deleted by Ada at 09:31:43 UTC on 2026-12-02. It cannot …'."""
        who = self.author or "someone without a name"
        when = f"{self.at:%H:%M:%S} UTC on {self.at:%Y-%m-%d}" if self.at else "an unknown time"
        undo = ("Undo is available: “Undo delete” (Alt+Z) in the browser of the person who "
                "deleted it brings it back." if self.undoable else "It cannot be undone.")
        return f"This {self.entity} was deleted by {who} at {when}. {undo}"


class DeletedSinceError(NotFoundError):
    """An edit of a row someone deleted since the page was loaded (409, or 404 for a page)."""

    def __init__(self, gone: GoneRow) -> None:
        super().__init__(f"{gone.sentence} Your changes were not saved.")
        self.gone = gone


def missing_row(session: Session, study_id: int, model: type[Any], row_id: int,
                message: str) -> NotFoundError:
    """The error for a row that is not there: who deleted it and when, when the study's change
    log says so (ids are never reused, so the entry is this row's), else plainly not found."""
    gone = gone_row(session, study_id, model, row_id)
    return DeletedSinceError(gone) if gone else NotFoundError(message)


@dataclass(frozen=True)
class GuardedResult:
    """The outcome of a guarded save; `clean` when the page had seen every change before it."""

    outcome: SaveOutcome
    conflicts: tuple[FieldConflict, ...] = ()
    clean: bool = False


def as_text(value: Any) -> str:
    """A stored or sent value as comparable text (None and '' alike)."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, Enum):
        return str(value.value)
    return str(value)


def changed_fields(values: Mapping[str, Any], originals: Mapping[str, Any]) -> dict[str, Any]:
    """Only the fields the person changed: a field still as loaded is not written, so a
    whole-row form never puts back a field someone else changed meanwhile."""
    return {name: value for name, value in values.items()
            if name not in originals or as_text(originals[name]) != as_text(value)}


def guarded_save(session: Session, model: type[Any], row_id: int, edit: PageEdit,
                 changes: Mapping[str, Any], written: Mapping[str, str | None] | None = None
                 ) -> GuardedResult:
    """Write `changes` unless someone else changed one of those fields since the page loaded.

    `written`: per field, the text this page itself saved there last (from `claim_keystroke`).
    The caller commits (or rolls back on a conflict).
    """
    if edit.version is None:
        return _unguarded(session, model, row_id, changes)
    outcome = save_if_version(session, model, row_id, edit.version, changes)
    if outcome is not SaveOutcome.CHANGED_SINCE:
        return GuardedResult(outcome, clean=True)
    for _ in range(MERGE_ATTEMPTS):
        row = session.get(model, row_id, populate_existing=True)
        if row is None:
            return GuardedResult(SaveOutcome.DELETED)
        clashing = [f for f in changes if _clashes(row, f, changes[f], edit, written or {})]
        if clashing:
            return GuardedResult(SaveOutcome.CHANGED_SINCE, tuple(
                conflict_at(session, row, f, changes[f]) for f in clashing))
        outcome = save_if_version(session, model, row_id, row.version, changes)
        if outcome is not SaveOutcome.CHANGED_SINCE:
            return GuardedResult(outcome)
    row = session.get(model, row_id, populate_existing=True)
    if row is None:
        return GuardedResult(SaveOutcome.DELETED)
    return GuardedResult(SaveOutcome.CHANGED_SINCE,
                         tuple(conflict_at(session, row, f, v) for f, v in changes.items()))


Reader = Callable[[Mapping[str, Any]], dict[str, Any]]


def save_form(session: Session, row: TrackedRow, values: Mapping[str, Any], edit: PageEdit, *,
              read: Reader, resolution: str = "", seen: Mapping[str, str] | None = None
              ) -> GuardedResult:
    """A whole-row form's save: only the fields the person changed, guarded by the version.

    `read` turns sent text (the page's originals, the values a conflict showed) into field
    values like the person's own, leaving out text that does not read. `resolution` answers an
    earlier conflict: the values it showed (`seen`) become the originals, so "keep mine" saves
    over them and "take theirs" (which also takes them as the values) saves nothing of those
    fields; either choice is logged. The caller commits, or rolls back on a conflict.
    """
    originals = read(edit.originals)
    values = dict(values)
    if resolution in (KEEP_MINE, TAKE_THEIRS) and seen:
        theirs = read(seen)
        originals.update(theirs)
        for name, value in theirs.items():
            log_resolution(session, row, name, kept_mine=resolution == KEEP_MINE,
                           theirs=as_text(value), mine=as_text(values.get(name)))
        if resolution == TAKE_THEIRS:
            values.update(theirs)
    row_id = int(row.id)  # type: ignore[attr-defined]
    return guarded_save(session, type(row), row_id, replace(edit, originals=originals),
                        changed_fields(values, originals))


def _unguarded(session: Session, model: type[Any], row_id: int,
               changes: Mapping[str, Any]) -> GuardedResult:
    row = session.get(model, row_id)
    if row is None:
        return GuardedResult(SaveOutcome.DELETED)
    for name, value in changes.items():
        setattr(row, name, value)
    session.add(row)
    session.flush()
    return GuardedResult(SaveOutcome.SAVED)


def _clashes(row: Any, name: str, mine: Any, edit: PageEdit,
             written: Mapping[str, str | None]) -> bool:
    """True when the stored value is neither the original, nor mine, nor this page's own."""
    stored = as_text(getattr(row, name))
    harmless = {as_text(mine)}
    if name in edit.originals:
        harmless.add(as_text(edit.originals[name]))
    if written.get(name) is not None:
        harmless.add(str(written[name]))
    return stored not in harmless


def conflict_at(session: Session, row: Any, name: str, mine: Any) -> FieldConflict:
    """The other person's value of one field, with who saved it and when (the change log)."""
    entry = _last_entry(session, row, "edit", name)
    return FieldConflict(field=name, theirs=as_text(getattr(row, name)), mine=as_text(mine),
                         author=entry.author if entry else "",
                         at=entry.at if entry else None, version=int(row.version))


def _last_entry(session: Session, row: Any, action: str, name: str = "") -> ChangeLogEntry | None:
    statement = select(ChangeLogEntry).where(
        ChangeLogEntry.entity == LOGGED_TYPES[type(row)], ChangeLogEntry.entity_id == row.id,
        ChangeLogEntry.action == action)
    if name:
        statement = statement.where(ChangeLogEntry.field == name)
    return session.exec(statement.order_by(col(ChangeLogEntry.id).desc()).limit(1)).first()


def gone_row(session: Session, study_id: int, model: type[Any], row_id: int) -> GoneRow | None:
    """Who deleted row `row_id` and when (the change log), and whether undo can bring it back.

    None when the study's log has no such delete (the row never existed here).
    """
    entity = LOGGED_TYPES[model]
    entry = session.exec(
        select(ChangeLogEntry).where(
            ChangeLogEntry.study_id == study_id, ChangeLogEntry.entity == entity,
            ChangeLogEntry.entity_id == row_id, ChangeLogEntry.action == "delete")
        .order_by(col(ChangeLogEntry.id).desc()).limit(1)
    ).first()
    if entry is None:
        return None
    return GoneRow(entity=entity, author=entry.author, at=entry.at,
                   undoable=_in_undo_store(session, study_id, row_id))


def _in_undo_store(session: Session, study_id: int, row_id: int) -> bool:
    items = session.exec(select(DeletedItem.payload).where(DeletedItem.study_id == study_id)).all()
    return any(entry["old_id"] == row_id for payload in items
               for entry in json.loads(payload)["rows"])


FIELD_EDITS: Any = FieldEdit.__table__  # type: ignore[attr-defined]
_FIELD_KEY = (FIELD_EDITS.c.entity == bindparam("of_entity"),
              FIELD_EDITS.c.row_id == bindparam("of_row"),
              FIELD_EDITS.c.field == bindparam("of_field"),
              FIELD_EDITS.c.client == bindparam("of_client"))
# Built once: every keystroke runs them (the written text comes back with the claim).
_RAISE_SEQ = (update(FIELD_EDITS).where(*_FIELD_KEY, FIELD_EDITS.c.seq < bindparam("new_seq"))
              .values(seq=bindparam("new_seq")).returning(FIELD_EDITS.c.written))
_SEQ_OF = table_select(FIELD_EDITS.c.seq).where(*_FIELD_KEY)
_NOTE_WRITTEN = update(FIELD_EDITS).where(*_FIELD_KEY).values(written=bindparam("written_text"))


def _field_key(entity: str, row_id: int, name: str, client: str) -> dict[str, Any]:
    return {"of_entity": entity, "of_row": row_id, "of_field": name, "of_client": client}


def claim_keystroke(session: Session, *, study_id: int, entity: str, row_id: int, name: str,
                    client: str, seq: int) -> tuple[bool, str | None]:
    """(accepted, text this page last saved in the field); not accepted when a newer one came.

    One guarded UPDATE sets the sequence only if it is higher and hands back the text this page
    wrote last; the row stays locked (on SQLite the database) until the caller commits, so two
    workers cannot both accept old and new. When the field has no row yet, another worker may
    make it between this worker's reads; once a row exists the guarded UPDATE decides, so a
    second pass always settles it.
    """
    key = _field_key(entity, row_id, name, client)
    for _ in range(2):
        raised = session.execute(_RAISE_SEQ, {**key, "new_seq": seq}).first()
        if raised is not None:
            written: str | None = raised.written
            return True, written
        seen = session.execute(_SEQ_OF, key).first()
        if seen is not None:
            if seen.seq >= seq:
                return False, None
            continue  # another worker's older keystroke made the row between the two reads
        try:
            with session.begin_nested():
                session.execute(insert(FIELD_EDITS).values(
                    study_id=study_id, entity=entity, row_id=row_id, field=name,
                    client=client, seq=seq))
            return True, None
        except IntegrityError:  # the same page's other keystroke inserted first: compare again
            continue
    return False, None


def remember_written(session: Session, *, entity: str, row_id: int, name: str, client: str,
                     text: str) -> None:
    """Note the text this page has just saved in the field (see `guarded_save`'s `written`)."""
    session.execute(_NOTE_WRITTEN, {**_field_key(entity, row_id, name, client),
                                    "written_text": text})


def log_resolution(session: Session, row: TrackedRow, name: str, *, kept_mine: bool,
                   theirs: str, mine: str) -> None:
    """Write the person's choice after a conflict to the change log."""
    choice = "kept their own value" if kept_mine else "took the other person's value"
    session.add(ChangeLogEntry(
        study_id=_study_of(row), author=str(session.info.get(AUTHOR_KEY, "")),
        action=RESOLUTION_ACTION, entity=LOGGED_TYPES[type(row)], entity_id=row.id,  # type: ignore[attr-defined]
        scenario_id=getattr(row, "scenario_id", None), field=name, old_value=theirs,
        new_value=mine if kept_mine else theirs,
        summary=f"{describe(row)}: {choice} after a conflict"[:500]))


def _study_of(row: Any) -> int:
    return int(getattr(row, "study_id", None) or row.id)
