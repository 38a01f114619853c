"""Reading what a form (or a caller) sent for a recommendation: each reader converts or refuses.

Values may arrive typed (date, float) or as the text a form sent ('2027-03-31', '300'); both are
read the same way. A refusal is an ActionInputError naming the form field and the rule.
"""

import math
from collections.abc import Mapping
from datetime import date
from enum import StrEnum
from typing import Any

from app.db.ids import read_row_id
from app.db.models import ActionStatus, Recommendation, text_limit
from app.services.study.errors import FieldInputError, length_problem

# Any in this module: each reader takes one raw form value (the form boundary).

EDITABLE_FIELDS = ("text", "owner", "due_date", "status", "status_reason", "expected_rrf")
TEXT_LIMITS = {
    field: text_limit(Recommendation, field) for field in ("text", "owner", "status_reason")
}
MOVE_STEPS = {"up": -1, "down": 1}


class ActionOrder(StrEnum):
    """How the actions list is sorted: by due date, or in the order the team chose."""

    DUE = "due"
    TEAM = "team"


class ActionInputError(FieldInputError):
    """Bad input for a recommendation: `field` is the form field, `message` names the rule."""


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
    scenario_id = read_row_id(value)
    if scenario_id is None:
        raise ActionInputError("scenario_id", "choose a scenario to link.")
    return scenario_id


def read_direction(value: Any) -> int:
    """A move direction, 'up' or 'down', as a step through the team order (-1 or +1)."""
    typed = str(value).strip()
    if typed not in MOVE_STEPS:
        raise ActionInputError(
            "direction", f"an action moves 'up' or 'down' in the team order (got '{typed}')."
        )
    return MOVE_STEPS[typed]


def read_order(value: Any) -> ActionOrder:
    """The list order asked for; anything but 'team' means the default, by due date."""
    return ActionOrder.TEAM if str(value).strip() == ActionOrder.TEAM else ActionOrder.DUE


def _read_text(field: str, value: Any) -> str:
    text = "" if value is None else str(value).strip()
    if field == "text" and not text:
        raise ActionInputError("text", "the recommendation text is required.")
    if problem := length_problem(text, TEXT_LIMITS[field]):
        raise ActionInputError(field, problem)
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


def check_reason(status: ActionStatus, reason: str) -> None:
    """A rejected action must say why."""
    if status == ActionStatus.REJECTED and not reason.strip():
        raise ActionInputError(
            "status_reason", "a rejected action needs a reason: say why it was rejected."
        )
