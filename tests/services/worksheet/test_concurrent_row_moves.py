"""Worksheet rows moved by several people at once: no move raises, no two rows share a place.

Moves take the study's order lock first (`queries.lock_study_order`), so each one reads the
order the previous one committed.
"""

from sqlalchemy import Engine
from sqlmodel import Session, select

from app.db.models import Deviation, Study
from app.services.worksheet.structure import move_row
from tests.helpers import run_at_once


def test_simultaneous_worksheet_moves_never_raise(
    session: Session, demo_study: Study, db_engine: Engine
) -> None:
    first_node = session.exec(select(Deviation.node_id).where(
        Deviation.study_id == demo_study.id)).first()
    ids = list(session.exec(select(Deviation.id).where(Deviation.node_id == first_node)).all())
    assert len(ids) >= 2

    def move(db: Session, number: int, i: int) -> object:
        return move_row(session=db, study_id=demo_study.id or 0,
                                  kind_name="deviation", row_id=ids[(number + i) % len(ids)] or 0,
                                  offset=-1 if (number + i) % 2 else 1)

    assert run_at_once(db_engine, move) == []
    session.expire_all()
    positions = session.exec(select(Deviation.position).where(
        Deviation.node_id == first_node)).all()
    assert sorted(positions) == list(range(len(ids)))
