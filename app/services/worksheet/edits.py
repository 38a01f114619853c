"""Field edits on the worksheet, read top-down: parse → guard against stale requests → save → reply.

`edit_step_value` is the keystroke path of a step's typed value; `edit_field` saves any other
field of a worksheet row. Both answer with one flat `FieldReply` for worksheet/field_reply.html.
"""

from collections import OrderedDict
from collections.abc import Mapping
from dataclasses import dataclass
from threading import Lock
from typing import Any

from sqlmodel import Session

from app.db.models import Step
from app.likelihood.numbers import ParsedNumber, format_number
from app.likelihood.types import LikelihoodInputError
from app.services.study.listing import NodeTotals
from app.services.study.totals import study_totals
from app.services.worksheet.page import ScenarioView, located_scenario, plain_value
from app.services.worksheet.structure import (
    StructureInputError,
    get_row,
    kind_of,
    node_id_of,
    parse_step_value,
    step_label,
    update_row,
)

# Any in this module: a row is one of five table models and form changes are raw values (both
# boundaries).

FIELD_PREFIX = {"node": "node", "deviation": "dev", "scenario": "sc", "step": "step",
                "safeguard": "sg"}
SAVED = "saved"


@dataclass(frozen=True)
class FieldReply:
    """The answer to one field edit: the field's line, the recomputed scenario and the totals.

    `scenario` is None for node and deviation fields, whose edits change no figure.
    """

    field_id: str
    said: str
    error: str
    node_id: int
    scenario: ScenarioView | None
    node_totals: NodeTotals
    study_totals: NodeTotals


def field_id(kind_name: str, row_id: int, field: str) -> str:
    """The HTML id of a worksheet field ("step-12-value_text")."""
    return f"{FIELD_PREFIX[kind_name]}-{row_id}-{field}"


def edit_step_value(*, session: Session, study_id: int, step_id: int, text: str,
                    client: str = "", seq: int | None = None) -> FieldReply | None:
    """Save a step's value if it parses; None when a newer edit of it was already seen."""
    step: Step = get_row(session, kind_of("step"), study_id, step_id)
    fid = field_id("step", step_id, "value_text")
    parsed = _parse_typed_value(step, text)
    if not LATEST_EDITS.accept(step_id, client, seq):
        return None
    if isinstance(parsed, LikelihoodInputError):
        session.rollback()
        fallback = f"{step_label(step)}: using last valid value {format_number(step.value)}"
        return _reply(session, "step", step, fid, error=parsed.message, fallback=fallback)
    if (step.value, step.value_text) != (parsed.value, parsed.text):
        step.value, step.value_text = parsed.value, parsed.text
        session.add(step)
        session.commit()
    return _reply(session, "step", step, fid, said=parsed.plain)


def _parse_typed_value(step: Step, text: str) -> ParsedNumber | LikelihoodInputError:
    """The typed text read as the step's kind needs (a frequency or a probability), or why not."""
    try:
        return parse_step_value(step.kind, text, step_label(step))
    except LikelihoodInputError as err:
        return err


class LatestEdits:
    """The newest sequence number seen per (step, browser page), so an older edit is dropped.

    It lives in the server process, so it is not shared across several workers.
    """

    def __init__(self, capacity: int = 10_000) -> None:
        self._seen: OrderedDict[tuple[int, str], int] = OrderedDict()
        self._lock = Lock()
        self._capacity = capacity

    def accept(self, step_id: int, client: str, seq: int | None) -> bool:
        """True when this edit is newer than every one seen from that page for that step."""
        if not client or seq is None:
            return True  # a plain form post carries no sequence: always current
        with self._lock:
            key = (step_id, client)
            if seq <= self._seen.get(key, -1):
                return False
            self._seen[key] = seq
            self._seen.move_to_end(key)
            while len(self._seen) > self._capacity:
                self._seen.popitem(last=False)
            return True


LATEST_EDITS = LatestEdits()


def edit_field(*, session: Session, study_id: int, kind_name: str, row_id: int,
               changes: Mapping[str, Any]) -> FieldReply:
    """Save the sent fields of a row, or say which rule the first bad one breaks."""
    row = get_row(session, kind_of(kind_name), study_id, row_id)
    sent = next(iter(changes), "")
    try:
        row = update_row(session=session, study_id=study_id, kind_name=kind_name,
                         row_id=row_id, changes=changes)
    except StructureInputError as err:
        session.rollback()
        return _reply(session, kind_name, row, field_id(kind_name, row_id, err.field),
                      error=err.message)
    said = plain_value(row) if (kind_name, sent) == ("step", "value_text") else SAVED
    return _reply(session, kind_name, row, field_id(kind_name, row_id, sent), said=said)


def _reply(session: Session, kind_name: str, row: Any, fid: str, *, said: str = "",
           error: str = "", fallback: str = "") -> FieldReply:
    """The reply from what is saved: the row's scenario recomputed (if any) and the totals.

    `row` is any worksheet row (its model depends on `kind_name`).
    """
    study_id: int = row.study_id
    scenario_id = _scenario_id_of(kind_name, row)
    scenario: ScenarioView | None = None
    if scenario_id is None:
        node_id = node_id_of(session, kind_name, row)
    else:
        scenario, node = located_scenario(session=session, study_id=study_id,
                                          scenario_id=scenario_id, fallback=fallback)
        node_id = node.id or 0
    totals = study_totals(session, study_id)
    return FieldReply(fid, said, error, node_id, scenario, totals.of_node(node_id), totals.study)


def _scenario_id_of(kind_name: str, row: Any) -> int | None:
    """The scenario a row belongs to (None for nodes and deviations)."""
    if kind_name == "scenario":
        return int(row.id)
    scenario_id: int | None = getattr(row, "scenario_id", None)
    return scenario_id
