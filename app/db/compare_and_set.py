"""Save a row only if nobody saved it since it was loaded: the base of conflict answers (409).

A page sends the version of the row it showed; `save_if_version` writes the person's changes
only when the row still has that version. The check and the write are one guarded statement,
`UPDATE … SET version = version + 1 WHERE id = :id AND version = :expected`, so no other save
can slip in between them on SQLite (one writer at a time) or PostgreSQL (the row stays locked
until this transaction ends). The changes themselves then go through the ORM, so the change
log records them like any other edit. The caller commits.
"""

from collections.abc import Mapping
from enum import StrEnum
from functools import cache
from typing import Any, TypeVar

from sqlalchemy import bindparam, inspect, select, update
from sqlalchemy.orm.attributes import set_committed_value
from sqlalchemy.orm.util import identity_key
from sqlmodel import Session

from app.db.models import TrackedRow, utc_now
from app.db.tracking import CLAIMED_KEY

Row = TypeVar("Row", bound=TrackedRow)
# Kept by the database and the tracking events, never by a caller's changes.
PROTECTED_FIELDS = frozenset({"id", "version", "created_at", "updated_at"})


class SaveOutcome(StrEnum):
    """What became of a guarded save."""

    SAVED = "saved"
    CHANGED_SINCE = "changed since"  # someone saved first: nothing written
    DELETED = "deleted"  # the row is gone: nothing written


def save_if_version(
    session: Session, model: type[Row], row_id: int, expected_version: int,
    changes: Mapping[str, Any],
) -> SaveOutcome:
    """Apply `changes` to row `row_id` only if its stored version is `expected_version`."""
    table = model.__table__  # type: ignore[attr-defined]
    unknown = set(changes) - set(table.c.keys()) | (set(changes) & PROTECTED_FIELDS)
    if unknown:
        raise ValueError(f"{model.__name__} has no editable field {sorted(unknown)}")
    now = utc_now()
    claimed = session.execute(_claim_version(table), {
        "row_id": row_id, "expected_version": expected_version, "now": now})
    if claimed.rowcount != 1:  # type: ignore[attr-defined]
        exists = session.execute(select(table.c.id).where(table.c.id == row_id)).first()
        return SaveOutcome.CHANGED_SINCE if exists else SaveOutcome.DELETED
    _apply_claimed(session, _claimed_row(session, model, row_id, expected_version, now),
                   changes)
    return SaveOutcome.SAVED


def _claimed_row(session: Session, model: type[Row], row_id: int, expected_version: int,
                 now: Any) -> Row:
    """The row as the guarded UPDATE left it. When the session already holds it at the version
    that UPDATE matched, unchanged, it is the row as stored then: only the version and the time
    the UPDATE set are new, and they are noted as stored (no second read). Otherwise, or if it
    was loaded before a save that raised the version, it is read again in this transaction."""
    held: Row | None = session.identity_map.get(identity_key(model, row_id))
    if (held is not None and held not in session.dirty and held.version == expected_version
            and not inspect(held).expired_attributes):
        set_committed_value(held, "version", expected_version + 1)
        set_committed_value(held, "updated_at", now)
        return held
    row = session.get(model, row_id, populate_existing=True)
    assert row is not None  # the guarded UPDATE has just matched it and holds the lock
    return row


@cache
def _claim_version(table: Any) -> Any:
    """The guarded UPDATE of one table, built once (every keystroke of a page runs it)."""
    return (update(table)
            .where(table.c.id == bindparam("row_id"),
                   table.c.version == bindparam("expected_version"))
            .values(version=table.c.version + 1,
                    updated_at=bindparam("now", type_=table.c.updated_at.type)))


def _apply_claimed(session: Session, row: TrackedRow, changes: Mapping[str, Any]) -> None:
    key = (type(row), int(row.id))  # type: ignore[attr-defined]
    claimed: set[tuple[type, int]] = session.info.setdefault(CLAIMED_KEY, set())
    claimed.add(key)
    try:
        for field, value in changes.items():
            setattr(row, field, value)
        session.flush()
    finally:
        claimed.discard(key)
