"""The room view: the scenario in focus, and a stamp that changes whenever the study does."""

import hashlib
from dataclasses import dataclass
from typing import Any

from sqlalchemy import Select
from sqlalchemy import select as select_columns
from sqlmodel import Session

from app.db.models import Deviation, Node, Scenario, Study, utc_now
from app.db.queries import fetch_first_scenario_id, fetch_scenario_count
from app.services.study.tree import NotFoundError, get_study
from app.services.worksheet.page import ScenarioView, located_scenario

# Any in this module: the stamp query's columns carry no types (the ORM boundary).


@dataclass(frozen=True)
class RoomView:
    """What the projector shows: the study, the scenario in focus (if any) and the stamp."""

    study: Study
    stamp: str
    scenario: ScenarioView | None
    node: Node | None
    deviation: Deviation | None
    scenario_count: int


def change_stamp_query(study_id: int) -> Select[Any]:
    """The study's content version and the scribe's focus: one row by primary key."""
    study: Any = Study
    statement: Select[Any] = select_columns(study.content_version, study.focus_scenario_id,
                                            study.focus_changed_at).where(study.id == study_id)
    return statement


def change_stamp(*, session: Session, study_id: int) -> str:
    """A short fingerprint of the study's content and focus; it changes with any edit.

    Every flush that changes the study's content raises `content_version` in the same
    transaction (app/db/tracking.py), so one row answers whether anything changed.
    """
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


def build_room_view(*, session: Session, study_id: int) -> RoomView:
    """The scenario in focus, or the study's first scenario until the scribe picks one.

    Only the shown scenario's node is loaded; the rest of the study is counted, not read.
    """
    stamp = change_stamp(session=session, study_id=study_id)
    study = get_study(session, study_id)
    chosen = shown_scenario_id(session, study)
    if chosen is None:
        return RoomView(study, stamp, None, None, None, 0)
    view, node = located_scenario(session=session, study_id=study_id, scenario_id=chosen)
    deviation = session.get(Deviation, view.item.scenario.deviation_id)
    return RoomView(study, stamp, view, node, deviation, fetch_scenario_count(session, study_id))


def shown_scenario_id(session: Session, study: Study) -> int | None:
    """The scribe's focus while that scenario exists, else the study's first scenario."""
    focus = session.get(Scenario, study.focus_scenario_id) if study.focus_scenario_id else None
    if focus is not None and focus.study_id == study.id:
        return focus.id
    return fetch_first_scenario_id(session, study.id or 0)
