"""Recommendations (actions): create, edit, delete, move, link to scenarios, and the list.

Every write validates first (record/action_inputs.py) and raises ActionInputError naming
the field and the rule, so nothing invalid reaches the database.
"""

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from datetime import date
from typing import Any

from sqlmodel import Session, col, select

from app.db.compare_and_set import SaveOutcome
from app.db.models import ActionStatus, Recommendation, RecommendationScenario, Scenario, saved_id
from app.db.queries import lock_study_order
from app.services.record.action_inputs import (
    ActionInputError,
    ActionOrder,
    check_reason,
    read_changes,
    read_direction,
)
from app.services.record.change_log import record_link_change
from app.services.study.conflicts import ConflictError, PageEdit, save_form
from app.services.study.tree import NotFoundError, get_study

# Any in this module: form values arrive raw (the form boundary).

STILL_OPEN = (ActionStatus.OPEN, ActionStatus.IN_PROGRESS)
STATUS_LABELS = {
    ActionStatus.OPEN: "Open",
    ActionStatus.IN_PROGRESS: "In progress",
    ActionStatus.DONE: "Done",
    ActionStatus.REJECTED: "Rejected",
}


def get_action(
    *, session: Session, action_id: int, study_id: int | None = None
) -> Recommendation:
    """The recommendation (of this study, when given), or NotFoundError."""
    action = session.get(Recommendation, action_id)
    if action is None or (study_id is not None and action.study_id != study_id):
        raise NotFoundError(f"There is no action {action_id}.")
    return action


def _scenario_of_study(session: Session, study_id: int, scenario_id: int) -> Scenario:
    scenario = session.get(Scenario, scenario_id)
    if scenario is None or scenario.study_id != study_id:
        raise ActionInputError("scenario_id", f"scenario {scenario_id} is not in this study.")
    return scenario


def add_action(
    *, session: Session, study_id: int, text: str, owner: str = "", due_date: Any = None,
    scenario_ids: Iterable[int] = (), expected_rrf: Any = None,
) -> Recommendation:
    """Add an open recommendation, optionally addressing some scenarios of the study."""
    get_study(session, study_id)
    values = read_changes(
        {"text": text, "owner": owner, "due_date": due_date, "expected_rrf": expected_rrf}
    )
    scenarios = [_scenario_of_study(session, study_id, sid) for sid in dict.fromkeys(scenario_ids)]
    action = Recommendation(study_id=study_id, position=_next_position(session, study_id),
                            **values)
    session.add(action)
    session.flush()
    for scenario in scenarios:
        session.add(RecommendationScenario(recommendation_id=saved_id(action.id),
                                            scenario_id=saved_id(scenario.id)))
    session.commit()
    session.refresh(action)
    return action


def _next_position(session: Session, study_id: int) -> int:
    positions = session.exec(
        select(Recommendation.position).where(Recommendation.study_id == study_id)
    ).all()
    return max(positions, default=-1) + 1


class ActionConflictError(ConflictError):
    """Someone saved the same fields of this action since the page loaded it (409)."""


def save_action(
    *, session: Session, action_id: int, changes: Mapping[str, Any],
    study_id: int | None = None, edit: PageEdit | None = None, resolution: str = "",
    seen: Mapping[str, str] | None = None,
) -> Recommendation:
    """Save the fields the person changed; a rejected action must carry a reason.

    A field someone else changed since the page loaded raises ActionConflictError (nothing
    saved); `resolution` "keep"/"take" answers it with the other person's values it showed
    (`seen`), and is logged.
    """
    action = get_action(session=session, action_id=action_id, study_id=study_id)
    values = read_changes(changes)
    check_reason(values.get("status", action.status),
                 values.get("status_reason", action.status_reason))
    result = save_form(session, action, values, edit or PageEdit(), read=_readable,
                       resolution=resolution, seen=seen)
    if result.outcome is SaveOutcome.CHANGED_SINCE:
        session.rollback()
        raise ActionConflictError(result.conflicts)
    if result.outcome is SaveOutcome.DELETED:
        raise NotFoundError(f"Action {action_id} was deleted since.")
    session.commit()
    session.refresh(action)
    return action


def _readable(texts: Mapping[str, Any]) -> dict[str, Any]:
    """Loaded or shown text read like the person's own (a field that does not read: unknown)."""
    known: dict[str, Any] = {}
    for name, text in texts.items():
        try:
            known.update(read_changes({name: text}))
        except ActionInputError:
            continue
    return known


def remove_action(*, session: Session, action_id: int, study_id: int | None = None) -> None:
    """Delete a recommendation and its links to scenarios."""
    action = get_action(session=session, action_id=action_id, study_id=study_id)
    for link in _links(session, [action_id]):
        session.delete(link)
    session.flush()  # links first: the unit of work does not order these two tables
    session.delete(action)
    session.commit()


def shift_action(
    *, session: Session, action_id: int, study_id: int, direction: str
) -> Recommendation:
    """Swap the action with its neighbour in the team order ('up' or 'down'); ends stay put."""
    lock_study_order(session, study_id)
    action = get_action(session=session, action_id=action_id, study_id=study_id)
    step = read_direction(direction)
    ordered = _in_team_order(session, study_id)
    index = ordered.index(action)
    if 0 <= index + step < len(ordered):
        neighbour = ordered[index + step]
        if neighbour.position == action.position:
            _renumber(ordered)  # tied positions (hand-made data) would swap to no effect
        action.position, neighbour.position = neighbour.position, action.position
        session.commit()
        session.refresh(action)
    return action


def _in_team_order(session: Session, study_id: int) -> list[Recommendation]:
    return list(session.exec(
        select(Recommendation).where(Recommendation.study_id == study_id)
        .order_by(col(Recommendation.position), col(Recommendation.id))
    ).all())


def _renumber(ordered: list[Recommendation]) -> None:
    for position, action in enumerate(ordered):
        action.position = position


def _links(session: Session, action_ids: list[int]) -> list[RecommendationScenario]:
    return list(session.exec(
        select(RecommendationScenario).where(
            col(RecommendationScenario.recommendation_id).in_(action_ids))
    ).all())


def link_scenario(
    *, session: Session, action_id: int, scenario_id: int, study_id: int | None = None
) -> Recommendation:
    """Record that the action addresses the scenario (a second link is a no-op)."""
    action = get_action(session=session, action_id=action_id, study_id=study_id)
    scenario = _scenario_of_study(session, action.study_id, scenario_id)
    if session.get(RecommendationScenario, (action_id, scenario_id)) is None:
        session.add(RecommendationScenario(recommendation_id=action_id, scenario_id=scenario_id))
        record_link_change(session=session, action=action, scenario=scenario, linked=True)
        session.commit()
    return action


def unlink_scenario(
    *, session: Session, action_id: int, scenario_id: int, study_id: int | None = None
) -> Recommendation:
    """The action no longer addresses the scenario (unlinking twice is a no-op)."""
    action = get_action(session=session, action_id=action_id, study_id=study_id)
    link = session.get(RecommendationScenario, (action_id, scenario_id))
    if link is not None:
        session.delete(link)
        scenario = session.get(Scenario, scenario_id)
        if scenario is not None:
            record_link_change(session=session, action=action, scenario=scenario, linked=False)
        session.commit()
    return action


def actions_of_scenario(*, session: Session, scenario_id: int) -> list[Recommendation]:
    """The recommendations that address a scenario, in their added order."""
    statement = (
        select(Recommendation)
        .join(RecommendationScenario,
              col(RecommendationScenario.recommendation_id) == col(Recommendation.id))
        .where(RecommendationScenario.scenario_id == scenario_id)
        .order_by(col(Recommendation.position), col(Recommendation.id))
    )
    return list(session.exec(statement).all())


def scenario_ids_by_action(*, session: Session, action_ids: list[int]) -> dict[int, list[int]]:
    """Each action's addressed scenario ids."""
    grouped: dict[int, list[int]] = {action_id: [] for action_id in action_ids}
    for link in _links(session, action_ids):
        grouped[link.recommendation_id].append(link.scenario_id)
    return grouped


@dataclass(frozen=True)
class ActionEntry:
    """One recommendation in the list, with its addressed scenarios and overdue mark."""

    action: Recommendation
    scenario_ids: tuple[int, ...]
    overdue: bool


@dataclass(frozen=True)
class ActionList:
    """A study's recommendations in the chosen order, overdue ones marked."""

    today: date
    entries: tuple[ActionEntry, ...]

    @property
    def overdue_count(self) -> int:
        """How many entries are overdue."""
        return sum(entry.overdue for entry in self.entries)


def is_overdue(action: Recommendation, today: date) -> bool:
    """Due before today and still open or in progress."""
    return action.due_date is not None and action.due_date < today and action.status in STILL_OPEN


def _due_order(action: Recommendation) -> tuple[bool, date, int, int]:
    return (action.due_date is None, action.due_date or date.max, action.position,
            action.id or 0)


def _team_order(action: Recommendation) -> tuple[int, int]:
    return (action.position, action.id or 0)


def list_actions(
    *, session: Session, study_id: int, today: date, order: ActionOrder = ActionOrder.DUE
) -> ActionList:
    """Every recommendation of the study, by due date (undated last) or in the team's order."""
    get_study(session, study_id)
    actions = sorted(
        session.exec(select(Recommendation).where(Recommendation.study_id == study_id)).all(),
        key=_team_order if order == ActionOrder.TEAM else _due_order,
    )
    linked = scenario_ids_by_action(session=session, action_ids=[a.id for a in actions if a.id])
    return ActionList(today, tuple(
        ActionEntry(a, tuple(sorted(linked.get(a.id or 0, []))), is_overdue(a, today))
        for a in actions
    ))
