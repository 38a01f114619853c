"""The keystroke-order guard lives in the database, so it holds across workers and threads.

Each "worker" here is its own database session, as each server process has its own; the
guard is the per-field sequence in `field_edit`, compared and set in the same transaction as
the value (app/services/study/conflicts.claim_keystroke). Runs on whichever database the suite
uses (SQLite by default, PostgreSQL with TALLYROOM_TEST_DATABASE_URL).
"""

import random
import threading
from concurrent.futures import ThreadPoolExecutor
from typing import Any

import pytest
from sqlalchemy import Engine, insert
from sqlmodel import Session

from app.db.models import FieldEdit, Step
from app.db.tracking import AUTHOR_KEY
from app.services.study.conflicts import _SEQ_OF, FIELD_EDITS, PageEdit, claim_keystroke
from app.services.worksheet.edits import edit_step_value
from tests.factories import make_scenario_tree, make_step
from tests.helpers import TEST_AUTHOR

PAGE = "page-of-one-scribe"


@pytest.fixture
def step(session: Session) -> Step:
    return make_step(session, make_scenario_tree(session), value=0.1, value_text="1 in 10")


def _worker(db_engine: Engine) -> Session:
    worker = Session(db_engine)
    worker.info[AUTHOR_KEY] = TEST_AUTHOR
    return worker


def _send(db_engine: Engine, step: Step, seq: int) -> bool:
    """One keystroke's request, served by its own worker; True when it was accepted."""
    with _worker(db_engine) as worker:
        reply = edit_step_value(session=worker, study_id=step.study_id, step_id=step.id or 0,
                                text=f"{seq} in 1000", edit=PageEdit(client=PAGE, seq=seq))
        return reply is not None


def _stored_text(db_engine: Engine, step: Step) -> str:
    with Session(db_engine) as fresh:
        row = fresh.get(Step, step.id)
        assert row is not None
        return row.value_text


def test_an_older_keystroke_served_by_another_worker_after_a_newer_one_is_dropped(
    db_engine: Engine, step: Step,
) -> None:
    assert _send(db_engine, step, 7)  # worker A serves the newer keystroke first
    with Session(db_engine) as fresh:  # what every worker sees: the database, not a process
        seen = fresh.get(FieldEdit, ("step", step.id, "value_text", PAGE))
        assert seen is not None and (seen.seq, seen.written) == (7, "7 in 1000")
    assert not _send(db_engine, step, 3)  # worker B gets the older one late: dropped (204)
    assert _stored_text(db_engine, step) == "7 in 1000"
    assert _send(db_engine, step, 8)
    assert _stored_text(db_engine, step) == "8 in 1000"


def test_keystrokes_racing_in_threads_leave_the_newest_text(db_engine: Engine, step: Step) -> None:
    """Twelve keystrokes sent at once in a shuffled order: whatever the interleaving, the field
    ends with the highest sequence number's text, as the browser shows it."""
    order = list(range(1, 13))
    random.Random(10).shuffle(order)
    start = threading.Barrier(len(order))

    def send(seq: int) -> bool:
        start.wait()
        return _send(db_engine, step, seq)

    with ThreadPoolExecutor(max_workers=len(order)) as pool:
        accepted = dict(zip(order, pool.map(send, order), strict=True))

    assert accepted[12]
    assert _stored_text(db_engine, step) == "12 in 1000"


def test_two_pages_keep_their_own_sequences(db_engine: Engine, step: Step) -> None:
    """Another page's low sequence number is not 'older' than this page's high one."""
    assert _send(db_engine, step, 50)
    with _worker(db_engine) as worker:
        other = edit_step_value(session=worker, study_id=step.study_id, step_id=step.id or 0,
                                text="1 in 20", edit=PageEdit(client="other-page", seq=1))
    assert other is not None
    assert _stored_text(db_engine, step) == "1 in 20"


def test_a_first_row_inserted_by_an_older_keystroke_between_the_reads_does_not_drop_the_newer(
    session: Session, step: Step,
) -> None:
    """The interleaving the threaded test met on PostgreSQL: keystroke 12 finds no row to raise,
    then, before it looks again, another worker commits the field's first row with keystroke 3.
    The row it then sees is older, so 12 must raise it, not give up."""
    original = session.execute
    looked = False

    def execute_with_a_rival(statement: Any, *args: Any, **kwargs: Any) -> Any:
        nonlocal looked
        if statement is _SEQ_OF and not looked:
            looked = True
            original(insert(FIELD_EDITS).values(
                study_id=step.study_id, entity="step", row_id=step.id, field="value_text",
                client=PAGE, seq=3))
        return original(statement, *args, **kwargs)

    session.execute = execute_with_a_rival  # type: ignore[method-assign]
    accepted, _ = claim_keystroke(session, study_id=step.study_id, entity="step",
                                  row_id=step.id or 0, name="value_text", client=PAGE, seq=12)
    assert looked and accepted
    assert original(_SEQ_OF, {"of_entity": "step", "of_row": step.id, "of_field": "value_text",
                              "of_client": PAGE}).scalar_one() == 12
