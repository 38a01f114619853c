"""A study's content version rises in the transaction of every content change, and only then,
so the room view's poll can ask one row whether anything changed. Two indexes keep an edit's
own lookups (the change log's keystroke folding, one scenario's actions) off full scans."""

from typing import Any

import pytest
from sqlalchemy import Engine
from sqlmodel import Session

from app.db.models import Recommendation, RecommendationScenario, Study, utc_now
from tests.factories import make_scenario_tree, make_step, make_study


def _content_version(session: Session, study_id: int) -> int:
    session.expire_all()
    study = session.get(Study, study_id)
    assert study is not None
    return study.content_version


def test_each_content_change_raises_the_version_by_one(session: Session) -> None:
    scenario = make_scenario_tree(session)
    start = _content_version(session, scenario.study_id)
    scenario.cause = "Operator opens the wrong valve"
    session.commit()
    assert _content_version(session, scenario.study_id) == start + 1
    step = make_step(session, scenario)  # a new row
    assert _content_version(session, scenario.study_id) == start + 2
    session.delete(step)  # a deleted row
    session.commit()
    assert _content_version(session, scenario.study_id) == start + 3


def test_linking_an_action_to_a_scenario_raises_the_version(session: Session) -> None:
    scenario = make_scenario_tree(session)
    action = Recommendation(study_id=scenario.study_id, text="Add a second level switch")
    session.add(action)
    session.commit()
    before = _content_version(session, scenario.study_id)
    session.add(RecommendationScenario(recommendation_id=action.id or 0,
                                       scenario_id=scenario.id or 0))
    session.commit()
    assert _content_version(session, scenario.study_id) == before + 1


def test_moving_the_focus_or_changing_nothing_leaves_it(session: Session) -> None:
    scenario = make_scenario_tree(session)
    study = session.get(Study, scenario.study_id)
    assert study is not None
    before = _content_version(session, scenario.study_id)
    study.focus_scenario_id, study.focus_changed_at = scenario.id, utc_now()
    session.commit()
    scenario.cause = scenario.cause  # set to what it holds: no change
    session.commit()
    assert _content_version(session, scenario.study_id) == before


def test_a_change_raises_only_its_own_studys_version(session: Session) -> None:
    other = make_study(session, title="Other unit")
    scenario = make_scenario_tree(session)
    before = _content_version(session, other.id or 0)
    scenario.consequence = "Toxic release"
    session.commit()
    assert _content_version(session, other.id or 0) == before


@pytest.mark.parametrize(("statement", "parameters", "index"), [
    # The keystroke's search for the same person's last edit of the same field (tracking.py).
    ("SELECT id FROM change_log_entry WHERE entity = ? AND entity_id = ? AND field = ? "
     "ORDER BY at DESC LIMIT 1", ("step", 1, "value_text"), "ix_change_log_entry_target"),
    # One scenario's actions (the worksheet, the room view, undo).
    ("SELECT recommendation_id FROM recommendation_scenario WHERE scenario_id = ?", (1,),
     "ix_recommendation_scenario_scenario_id"),
])  # fmt: skip
def test_an_edits_lookups_use_their_index(db_engine: Engine, statement: str,
                                          parameters: tuple[Any, ...], index: str) -> None:
    if db_engine.dialect.name != "sqlite":
        pytest.skip("the query plan is asked of SQLite")
    with db_engine.connect() as connection:
        plan = [row[-1] for row in connection.exec_driver_sql(
            f"EXPLAIN QUERY PLAN {statement}", parameters)]
    assert any(index in line for line in plan), plan
