"""Reorders from several people at once never raise and never leave tied positions.

Without the per-study order lock, two moves read the same positions and each wrote from its
stale read: on PostgreSQL the team order ended with two actions at one position.
"""

import threading
from collections.abc import Callable

from sqlalchemy import Engine
from sqlmodel import Session, col, select

from app.db.models import Deviation, Recommendation, Study
from app.db.tracking import AUTHOR_KEY
from app.services import actions, structure

THREADS, MOVES = 4, 25


def run_at_once(db_engine: Engine, move: Callable[[Session, int, int], object]) -> list[str]:
    """Each thread makes MOVES moves in its own session, all starting together; the errors."""
    errors: list[str] = []
    start = threading.Barrier(THREADS)

    def worker(number: int) -> None:
        start.wait()
        for i in range(MOVES):
            try:
                with Session(db_engine) as session:
                    session.info[AUTHOR_KEY] = f"thread {number}"
                    move(session, number, i)
            except Exception as err:
                errors.append(f"{type(err).__name__}: {err}")

    threads = [threading.Thread(target=worker, args=(n,)) for n in range(THREADS)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    return errors


def test_simultaneous_action_moves_keep_a_clean_team_order(
    session: Session, demo_study: Study, db_engine: Engine
) -> None:
    ids = list(session.exec(select(Recommendation.id).where(
        Recommendation.study_id == demo_study.id).order_by(col(Recommendation.id))).all())
    assert len(ids) >= 4

    def move(db: Session, number: int, i: int) -> object:
        return actions.move_action(session=db, study_id=demo_study.id or 0,
                                   action_id=ids[(number * 7 + i) % len(ids)] or 0,
                                   direction="up" if (number + i) % 2 else "down")

    assert run_at_once(db_engine, move) == []
    session.expire_all()
    positions = session.exec(select(Recommendation.position).where(
        Recommendation.study_id == demo_study.id)).all()
    assert sorted(positions) == list(range(len(ids)))


def test_simultaneous_worksheet_moves_never_raise(
    session: Session, demo_study: Study, db_engine: Engine
) -> None:
    first_node = session.exec(select(Deviation.node_id).where(
        Deviation.study_id == demo_study.id)).first()
    ids = list(session.exec(select(Deviation.id).where(Deviation.node_id == first_node)).all())
    assert len(ids) >= 2

    def move(db: Session, number: int, i: int) -> object:
        return structure.move_row(session=db, study_id=demo_study.id or 0,
                                  kind_name="deviation", row_id=ids[(number + i) % len(ids)] or 0,
                                  offset=-1 if (number + i) % 2 else 1)

    assert run_at_once(db_engine, move) == []
    session.expire_all()
    positions = session.exec(select(Deviation.position).where(
        Deviation.node_id == first_node)).all()
    assert sorted(positions) == list(range(len(ids)))
