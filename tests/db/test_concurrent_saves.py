"""Concurrent saves: version counters never lose an increment, and a guarded save has one winner.

Runs on whichever database the suite uses (SQLite by default, PostgreSQL when
TALLYROOM_TEST_DATABASE_URL points at one).
"""

import threading
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from typing import TypeVar

import pytest
from sqlalchemy import Engine, event
from sqlmodel import Session, select

from app.db.compare_and_set import SaveOutcome, save_if_version
from app.db.models import ChangeLogEntry, Step
from app.db.tracking import AUTHOR_KEY
from tests.factories import make_scenario_tree, make_step

ROUNDS = 10
Result = TypeVar("Result")


@pytest.fixture
def step(session: Session) -> Step:
    """A committed IPL step at version 1."""
    made = make_step(session, make_scenario_tree(session), value=0.1)
    assert made.version == 1
    return made


def _in_threads(count: int, work: Callable[[int], Result]) -> list[Result]:
    with ThreadPoolExecutor(max_workers=count) as pool:
        return list(pool.map(work, range(count)))


def _stored(db_engine: Engine, step_id: int) -> Step:
    with Session(db_engine) as fresh:
        row = fresh.get(Step, step_id)
        assert row is not None
        return row


def test_two_sessions_that_loaded_the_same_version_both_count(
    db_engine: Engine, step: Step
) -> None:
    # Both threads load the row, wait for each other, then both commit an edit: with the
    # counter computed in Python both would write "loaded + 1" and one increment would be lost.
    loaded = threading.Barrier(2)

    def edit(thread: int) -> None:
        for round_number in range(ROUNDS):
            with Session(db_engine) as own:
                row = own.get(Step, step.id)
                assert row is not None
                loaded.wait(timeout=10)
                row.description = f"thread {thread}, round {round_number}"
                own.commit()

    _in_threads(2, edit)
    assert _stored(db_engine, step.id or 0).version == 1 + 2 * ROUNDS


def test_a_guarded_save_with_the_current_version_saves_logs_and_bumps(
    session: Session, db_engine: Engine, step: Step
) -> None:
    outcome = save_if_version(session, Step, step.id or 0, 1, {"value": 0.01})
    session.commit()
    assert outcome is SaveOutcome.SAVED
    stored = _stored(db_engine, step.id or 0)
    assert (stored.value, stored.version) == (0.01, 2)
    edits = session.exec(select(ChangeLogEntry).where(ChangeLogEntry.field == "value")).all()
    assert [(e.entity_id, e.old_value, e.new_value) for e in edits] == [(step.id, "0.1", "0.01")]


def test_a_guarded_save_after_someone_else_saved_changes_nothing(
    session: Session, db_engine: Engine, step: Step
) -> None:
    with Session(db_engine) as other:
        other.info[AUTHOR_KEY] = "Other Editor"
        assert save_if_version(other, Step, step.id or 0, 1, {"value": 0.5}) is SaveOutcome.SAVED
        other.commit()
    outcome = save_if_version(session, Step, step.id or 0, 1, {"value": 0.01})
    session.commit()
    assert outcome is SaveOutcome.CHANGED_SINCE
    stored = _stored(db_engine, step.id or 0)
    assert (stored.value, stored.version) == (0.5, 2)
    authors = session.exec(select(ChangeLogEntry.author).where(ChangeLogEntry.field == "value"))
    assert list(authors) == ["Other Editor"]


def test_a_guarded_save_of_a_deleted_row_says_deleted(session: Session, step: Step) -> None:
    step_id = step.id or 0
    session.delete(step)
    session.commit()
    assert save_if_version(session, Step, step_id, 1, {"value": 0.01}) is SaveOutcome.DELETED


def test_of_several_guarded_saves_from_one_version_exactly_one_wins(
    db_engine: Engine, step: Step
) -> None:
    ready = threading.Barrier(4)

    def save(thread: int) -> SaveOutcome:
        with Session(db_engine) as own:
            ready.wait(timeout=10)
            outcome = save_if_version(own, Step, step.id or 0, 1, {"value": 0.1 / (thread + 2)})
            own.commit()
            return outcome

    outcomes = _in_threads(4, save)
    assert sorted(outcomes) == sorted([SaveOutcome.SAVED] + [SaveOutcome.CHANGED_SINCE] * 3)
    winner = outcomes.index(SaveOutcome.SAVED)
    stored = _stored(db_engine, step.id or 0)
    assert (stored.value, stored.version) == (0.1 / (winner + 2), 2)


@pytest.mark.parametrize("field", ["version", "id", "no_such_field"])
def test_a_guarded_save_refuses_fields_the_caller_may_not_set(
    session: Session, step: Step, field: str
) -> None:
    with pytest.raises(ValueError, match=f"Step has no editable field \\['{field}'\\]"):
        save_if_version(session, Step, step.id or 0, 1, {field: 3})


def _step_reads(db_engine: Engine) -> tuple[list[str], Callable[..., None]]:
    seen: list[str] = []

    def note(_conn: object, _cursor: object, statement: str, *_args: object) -> None:
        if statement.lstrip().upper().startswith("SELECT") and "FROM step" in statement:
            seen.append(statement)

    return seen, note


def test_a_row_held_at_the_matched_version_is_not_read_again(
    session: Session, db_engine: Engine, step: Step
) -> None:
    session.refresh(step)  # the page's row, loaded in this session at version 1
    seen, note = _step_reads(db_engine)
    event.listen(db_engine, "before_cursor_execute", note)
    try:
        outcome = save_if_version(session, Step, step.id or 0, 1, {"value": 0.01})
    finally:
        event.remove(db_engine, "before_cursor_execute", note)
    assert outcome is SaveOutcome.SAVED and seen == []
    assert step.version == 2 and step.updated_at is not None
    session.commit()
    stored = _stored(db_engine, step.id or 0)
    assert (stored.value, stored.version) == (0.01, 2)
    edits = session.exec(select(ChangeLogEntry).where(ChangeLogEntry.field == "value")).all()
    assert [(e.old_value, e.new_value) for e in edits] == [("0.1", "0.01")]


def test_a_row_held_from_before_another_save_is_read_again_and_keeps_that_save(
    session: Session, db_engine: Engine, step: Step
) -> None:
    """Loaded at version 1; someone saves a description (version 2); this page, which showed
    version 2, saves the value: the row it saves from is the stored one, not the one held."""
    session.refresh(step)
    with Session(db_engine) as other:
        other.info[AUTHOR_KEY] = "Other Editor"
        assert save_if_version(other, Step, step.id or 0, 1,
                               {"description": "Relief valve PSV-101 (invented)"}
                               ) is SaveOutcome.SAVED
        other.commit()
    assert save_if_version(session, Step, step.id or 0, 2, {"value": 0.01}) is SaveOutcome.SAVED
    assert (step.description, step.version) == ("Relief valve PSV-101 (invented)", 3)
    session.commit()
    stored = _stored(db_engine, step.id or 0)
    assert (stored.description, stored.value, stored.version) == (
        "Relief valve PSV-101 (invented)", 0.01, 3)
