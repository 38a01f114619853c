"""The room view: the scenario in focus, and a stamp that changes whenever the study does."""

import hashlib
from dataclasses import dataclass
from typing import Any

from sqlalchemy import Select
from sqlmodel import Session, col, func, select

from app.db.models import (
    Deviation,
    Node,
    Recommendation,
    RecommendationScenario,
    Safeguard,
    Scenario,
    SeverityCategory,
    Step,
    Study,
    utc_now,
)
from app.services.study_tree import NotFoundError, get_study, load_study_tree
from app.services.worksheet_edits import ScenarioReply, scenario_reply

WATCHED = (Node, Deviation, Scenario, Step, Safeguard, SeverityCategory, Recommendation)


@dataclass(frozen=True)
class RoomView:
    """What the projector shows: the study, the scenario in focus (if any) and the stamp."""

    study: Study
    stamp: str
    reply: ScenarioReply | None
    node: Node | None
    deviation: Deviation | None
    scenario_count: int


def change_stamp_query(study_id: int) -> Select[Any]:
    """Counts and newest edit times of the study's rows, its focus, and its action links."""
    columns: list[Any] = []
    for model in WATCHED:
        table: Any = model
        columns.append(select(func.count()).where(table.study_id == study_id).scalar_subquery())
        columns.append(select(func.max(table.updated_at)).where(table.study_id == study_id)
                       .scalar_subquery())
    links = (select(func.count()).select_from(RecommendationScenario)
             .join(Recommendation,
                   col(Recommendation.id) == col(RecommendationScenario.recommendation_id))
             .where(Recommendation.study_id == study_id).scalar_subquery())
    return select(Study.updated_at, Study.focus_scenario_id, Study.focus_changed_at, links,
                  *columns).where(Study.id == study_id)


def change_stamp(*, session: Session, study_id: int) -> str:
    """A short fingerprint of the study's content and focus; it changes with any edit."""
    row = session.exec(change_stamp_query(study_id)).first()  # type: ignore[call-overload]
    if row is None:
        raise NotFoundError(f"There is no study {study_id}.")
    return hashlib.sha256(repr(tuple(row)).encode()).hexdigest()[:16]


def set_focus(*, session: Session, study_id: int, scenario_id: int) -> None:
    """Record which scenario the scribe is on (not part of the record: no change-log entry)."""
    study = get_study(session, study_id)
    scenario = session.get(Scenario, scenario_id)
    if scenario is None or scenario.study_id != study_id:
        raise NotFoundError(f"There is no scenario {scenario_id} in study {study_id}.")
    if study.focus_scenario_id != scenario_id:
        study.focus_scenario_id = scenario_id
        study.focus_changed_at = utc_now()
        session.add(study)
        session.commit()


def read_room(*, session: Session, study_id: int) -> RoomView:
    """The scenario in focus, or the study's first scenario until the scribe picks one."""
    stamp = change_stamp(session=session, study_id=study_id)
    tree = load_study_tree(session, study_id)
    scenarios = tree.scenario_nodes()
    ids = [s.scenario.id for s in scenarios]
    focus = tree.study.focus_scenario_id
    chosen = focus if focus in ids else (ids[0] if ids else None)
    if chosen is None:
        return RoomView(tree.study, stamp, None, None, None, 0)
    reply = scenario_reply(session=session, study_id=study_id, scenario_id=chosen, tree=tree)
    scenario = reply.scenario.item.scenario if reply.scenario else None
    deviation = session.get(Deviation, scenario.deviation_id) if scenario else None
    return RoomView(tree.study, stamp, reply, session.get(Node, reply.node_id), deviation,
                    len(scenarios))
