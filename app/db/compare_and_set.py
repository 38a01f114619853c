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

from sqlalchemy import bindparam, select, update
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
    claimed = session.execute(_claim_version(table), {
        "row_id": row_id, "expected_version": expected_version, "now": utc_now()})
    if claimed.rowcount != 1:  # type: ignore[attr-defined]
        exists = session.execute(select(table.c.id).where(table.c.id == row_id)).first()
        return SaveOutcome.CHANGED_SINCE if exists else SaveOutcome.DELETED
    _apply_claimed(session, model, row_id, changes)
    return SaveOutcome.SAVED


@cache
def _claim_version(table: Any) -> Any:
    """The guarded UPDATE of one table, built once (every keystroke of a page runs it)."""
    return (update(table)
            .where(table.c.id == bindparam("row_id"),
                   table.c.version == bindparam("expected_version"))
            .values(version=table.c.version + 1,
                    updated_at=bindparam("now", type_=table.c.updated_at.type)))


def _apply_claimed(
    session: Session, model: type[Row], row_id: int, changes: Mapping[str, Any]
) -> None:
    # Re-read inside this transaction: the row as it is now, with the version just raised.
    row = session.get(model, row_id, populate_existing=True)
    assert row is not None  # the guarded UPDATE has just matched it and holds the lock
    key = (model, row_id)
    claimed: set[tuple[type, int]] = session.info.setdefault(CLAIMED_KEY, set())
    claimed.add(key)
    try:
        for field, value in changes.items():
            setattr(row, field, value)
        session.flush()
    finally:
        claimed.discard(key)
