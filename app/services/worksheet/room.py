"""The room view: the scenario in focus, and a stamp that changes whenever the study does."""

import hashlib
from dataclasses import dataclass
from typing import Any

from sqlalchemy import bindparam, func
from sqlalchemy import select as select_columns
from sqlmodel import Session

from app.db.models import Deviation, EstimateRound, Node, RoundEstimate, Scenario, Study, utc_now
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


def _newest(model: Any) -> tuple[Any, Any]:
    """How many rows of a study a table holds and when the newest changed (scalar subqueries)."""
    where = model.study_id == bindparam("study_id")
    return (select_columns(func.count(model.id)).where(where).scalar_subquery(),
            select_columns(func.max(model.updated_at)).where(where).scalar_subquery())


_STUDY: Any = Study
# Built once: the projector asks twice a second. One row: the study's content version and
# focus, and the estimate rounds' and answers' counts and newest changes.
_LIVE_STAMP = select_columns(_STUDY.content_version, _STUDY.focus_scenario_id,
                             _STUDY.focus_changed_at, *_newest(EstimateRound),
                             *_newest(RoundEstimate)).where(_STUDY.id == bindparam("study_id"))


def live_stamp(*, session: Session, study_id: int) -> str:
    """The room view's stamp: the study's content and focus, then the estimate rounds (a round
    shows on this view), from one statement; it changes with any edit, focus move or answer."""
    row = session.connection().execute(_LIVE_STAMP, {"study_id": study_id}).first()
    if row is None:
        raise NotFoundError(f"There is no study {study_id}.")
    worksheet, rounds = tuple(row[:3]), tuple(row[3:])
    return "-".join(hashlib.sha256(repr(part).encode()).hexdigest()[:16]
                    for part in (worksheet, rounds))


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
    stamp = live_stamp(session=session, study_id=study_id)
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
