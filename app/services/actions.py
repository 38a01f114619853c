"""Recommendations (actions): create, edit, delete, link to scenarios, and the sorted list.

Every write validates first and raises ActionInputError naming the field and the rule, so
nothing invalid reaches the database. Values may arrive typed (date, float) or as the text a
form sent ('2027-03-31', '300'); both are read the same way.
"""

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from datetime import date
from typing import Any

from sqlmodel import Session, col, select

from app.db.models import (
    ActionStatus,
    Recommendation,
    RecommendationScenario,
    Scenario,
    text_limit,
)
from app.services.change_log import record_link_change
from app.services.study_tree import NotFoundError, get_study

EDITABLE_FIELDS = ("text", "owner", "due_date", "status", "status_reason", "expected_rrf")
STILL_OPEN = (ActionStatus.OPEN, ActionStatus.IN_PROGRESS)
STATUS_LABELS = {
    ActionStatus.OPEN: "Open",
    ActionStatus.IN_PROGRESS: "In progress",
    ActionStatus.DONE: "Done",
    ActionStatus.REJECTED: "Rejected",
}
TEXT_LIMITS = {
    field: text_limit(Recommendation, field) for field in ("text", "owner", "status_reason")
}


class ActionInputError(ValueError):
    """Bad input for a recommendation: `field` is the form field, `message` names the rule."""

    def __init__(self, field: str, message: str) -> None:
        super().__init__(message)
        self.field = field
        self.message = message


def read_due_date(value: Any) -> date | None:
    """A due date from a date, an ISO 'YYYY-MM-DD' text, or nothing."""
    if value is None or isinstance(value, date):
        return value
    typed = str(value).strip()
    if not typed:
        return None
    try:
        return date.fromisoformat(typed)
    except ValueError:
        raise ActionInputError(
            "due_date", f"the due date must be a date written YYYY-MM-DD (got '{typed}')."
        ) from None


def read_expected_rrf(value: Any) -> float | None:
    """An expected risk reduction factor: a finite number above 0, or nothing."""
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    try:
        rrf = float(str(value).strip().replace(",", "")) if isinstance(value, str) else float(value)
    except ValueError:
        raise ActionInputError(
            "expected_rrf", f"the expected risk reduction must be a number such as 100 "
            f"(got '{str(value).strip()}')."
        ) from None
    if not math.isfinite(rrf) or rrf <= 0:
        raise ActionInputError(
            "expected_rrf", f"the expected risk reduction must be a number above 0 (got {value})."
        )
    return rrf


def read_status(value: Any) -> ActionStatus:
    """One of the action statuses (open, in_progress, done, rejected)."""
    try:
        return ActionStatus(str(value).strip())
    except ValueError:
        known = ", ".join(status.value for status in ActionStatus)
        raise ActionInputError(
            "status", f"the status must be one of {known} (got '{value}')."
        ) from None


def read_scenario_id(value: Any) -> int:
    """A scenario id chosen in a select."""
    try:
        return int(str(value).strip())
    except ValueError:
        raise ActionInputError("scenario_id", "choose a scenario to link.") from None


def _read_text(field: str, value: Any) -> str:
    text = "" if value is None else str(value).strip()
    if field == "text" and not text:
        raise ActionInputError("text", "the recommendation text is required.")
    if len(text) > TEXT_LIMITS[field]:
        raise ActionInputError(
            field, f"at most {TEXT_LIMITS[field]} characters (got {len(text)})."
        )
    return text


_READERS = {
    "text": lambda v: _read_text("text", v),
    "owner": lambda v: _read_text("owner", v),
    "status_reason": lambda v: _read_text("status_reason", v),
    "due_date": read_due_date,
    "status": read_status,
    "expected_rrf": read_expected_rrf,
}


def read_changes(changes: Mapping[str, Any]) -> dict[str, Any]:
    """Validate and convert the sent fields; an unknown field is refused."""
    unknown = sorted(set(changes) - set(EDITABLE_FIELDS))
    if unknown:
        raise ActionInputError(unknown[0], f"'{unknown[0]}' is not an editable action field.")
    return {name: _READERS[name](value) for name, value in changes.items()}


def _check_reason(status: ActionStatus, reason: str) -> None:
    if status == ActionStatus.REJECTED and not reason.strip():
        raise ActionInputError(
            "status_reason", "a rejected action needs a reason: say why it was rejected."
        )


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


def create_action(
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
        session.add(RecommendationScenario(recommendation_id=action.id, scenario_id=scenario.id))
    session.commit()
    session.refresh(action)
    return action


def _next_position(session: Session, study_id: int) -> int:
    positions = session.exec(
        select(Recommendation.position).where(Recommendation.study_id == study_id)
    ).all()
    return max(positions, default=-1) + 1


def update_action(
    *, session: Session, action_id: int, changes: Mapping[str, Any],
    study_id: int | None = None,
) -> Recommendation:
    """Change only the sent fields; a rejected action must carry a reason."""
    action = get_action(session=session, action_id=action_id, study_id=study_id)
    values = read_changes(changes)
    _check_reason(values.get("status", action.status),
                  values.get("status_reason", action.status_reason))
    action.sqlmodel_update(values)
    session.add(action)
    session.commit()
    session.refresh(action)
    return action


def delete_action(*, session: Session, action_id: int, study_id: int | None = None) -> None:
    """Delete a recommendation and its links to scenarios."""
    action = get_action(session=session, action_id=action_id, study_id=study_id)
    for link in _links(session, [action_id]):
        session.delete(link)
    session.flush()  # links first: the unit of work does not order these two tables
    session.delete(action)
    session.commit()


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
    """A study's recommendations sorted by due date (undated last), overdue ones marked."""

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


def list_actions(*, session: Session, study_id: int, today: date) -> ActionList:
    """Every recommendation of the study, by due date with undated ones last."""
    get_study(session, study_id)
    actions = sorted(
        session.exec(select(Recommendation).where(Recommendation.study_id == study_id)).all(),
        key=_due_order,
    )
    linked = scenario_ids_by_action(session=session, action_ids=[a.id for a in actions if a.id])
    return ActionList(today, tuple(
        ActionEntry(a, tuple(sorted(linked.get(a.id or 0, []))), is_overdue(a, today))
        for a in actions
    ))
