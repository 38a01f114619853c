"""Moves in the team order from several people at once never raise and never leave tied
positions.

Without the per-study order lock, two moves read the same positions and each wrote from its
stale read: on PostgreSQL the team order ended with two actions at one position.
"""

from sqlalchemy import Engine
from sqlmodel import Session, col, select

from app.db.models import Recommendation, Study
from app.services.record.actions import shift_action
from tests.helpers import run_at_once


def test_simultaneous_action_moves_keep_a_clean_team_order(
    session: Session, demo_study: Study, db_engine: Engine
) -> None:
    ids = list(session.exec(select(Recommendation.id).where(
        Recommendation.study_id == demo_study.id).order_by(col(Recommendation.id))).all())
    assert len(ids) >= 4

    def move(db: Session, number: int, i: int) -> object:
        return shift_action(session=db, study_id=demo_study.id or 0,
                                   action_id=ids[(number * 7 + i) % len(ids)] or 0,
                                   direction="up" if (number + i) % 2 else "down")

    assert run_at_once(db_engine, move) == []
    session.expire_all()
    positions = session.exec(select(Recommendation.position).where(
        Recommendation.study_id == demo_study.id)).all()
    assert sorted(positions) == list(range(len(ids)))
