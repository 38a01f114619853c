"""Worksheet structure: create, edit and reorder nodes, deviations, scenarios, steps, safeguards.

Every write validates first and raises StructureInputError naming the field and the rule, so
nothing invalid reaches the database (table models do not validate on their own).
"""

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from sqlmodel import Session, col, select

from app.db.ids import read_row_id
from app.db.models import Deviation, Node, Safeguard, Scenario, SeverityCategory, Step, text_limit
from app.db.queries import lock_study_order
from app.likelihood.numbers import ParsedNumber, parse_frequency, parse_probability
from app.likelihood.types import LikelihoodInputError, StepKind
from app.likelihood.uncertainty import read_typed_error_factor
from app.services.study.errors import FieldInputError, length_problem
from app.services.study.tree import NotFoundError, get_study

# Any in this module: a worksheet row is one of five table models, chosen at run time by its kind
# name, and form values are raw text until read here (both boundaries).

# A new layer, modifier or enabling condition counts as 1 (no credit) until the team agrees a
# number: never a guess that would lower the frequency. A new scenario's initiating event has
# no value and the scenario no severity: it is incomplete (services/study/completeness.py)
# until the team gives both, so no stand-in number ever shows a target, a gap or a SIL.
NEW_STEP_VALUE_TEXT = "1"


class StructureInputError(FieldInputError):
    """Bad input for a worksheet row: `field` is the form field, `message` names the rule."""


@dataclass(frozen=True)
class RowKind:
    """One kind of worksheet row: its table, its parent link and its editable text fields."""

    name: str
    model: type[Any]
    parent_field: str | None
    text_limits: Mapping[str, int]
    required: tuple[str, ...] = ()


def _limits(model: type[Any], *fields: str) -> dict[str, int]:
    return {field: text_limit(model, field) for field in fields}


KINDS: dict[str, RowKind] = {
    "node": RowKind("node", Node, None,
                    _limits(Node, "number", "name", "design_intent", "drawing_reference"),
                    ("name",)),
    "deviation": RowKind("deviation", Deviation, "node_id",
                         _limits(Deviation, "guideword", "parameter", "description")),
    "scenario": RowKind("scenario", Scenario, "deviation_id",
                        _limits(Scenario, "cause", "consequence", "notes")),
    "step": RowKind("step", Step, "scenario_id", _limits(Step, "description", "basis")),
    "safeguard": RowKind("safeguard", Safeguard, "scenario_id",
                         _limits(Safeguard, "description", "note"), ("description",)),
}
PARENT_KIND = {"deviation": "node", "scenario": "deviation", "step": "scenario",
               "safeguard": "scenario"}
NEW_ROW_DEFAULTS: dict[str, dict[str, str]] = {"deviation": {"guideword": "", "parameter": ""}}
CATEGORY_FIELDS = ("severity_category_id", "environment_category_id", "asset_category_id")


def kind_of(name: str) -> RowKind:
    """The row kind called `name`, or NotFoundError."""
    if name not in KINDS:
        raise NotFoundError(f"There is no kind of worksheet row called '{name}'.")
    return KINDS[name]


def get_row(session: Session, kind: RowKind, study_id: int, row_id: int) -> Any:
    """The row of this kind in this study, or NotFoundError."""
    row = session.get(kind.model, row_id)
    if row is None or row.study_id != study_id:
        raise NotFoundError(f"There is no {kind.name} {row_id} in study {study_id}.")
    return row


def parse_step_value(step_kind: StepKind, text: str, label: str = "") -> ParsedNumber:
    """Read a step's value as typed: a frequency for the initiating event, else a probability."""
    if step_kind == StepKind.INITIATING_EVENT:
        return parse_frequency(text, label)
    return parse_probability(text, label)


def step_label(step: Step) -> str:
    """How messages name a step: its description, or its kind when it has none."""
    return step.description or step.kind.label


def siblings(session: Session, kind: RowKind, row: Any) -> list[Any]:
    """The rows sharing the row's parent (and, for steps, its kind), in display order."""
    model: Any = kind.model
    statement = select(model).where(model.study_id == row.study_id)
    if kind.parent_field:
        statement = statement.where(getattr(model, kind.parent_field) ==
                                    getattr(row, kind.parent_field))
    if kind.model is Step:
        statement = statement.where(col(Step.kind) == row.kind)
    return list(session.exec(statement.order_by(model.position, model.id)).all())


def _place(session: Session, kind: RowKind, row: Any, after: Any | None) -> None:
    """Put a new row after `after`, or at the end of its siblings."""
    others = [r for r in siblings(session, kind, row) if r is not row]
    index = others.index(after) + 1 if after in others else len(others)
    for position, sibling in enumerate([*others[:index], row, *others[index:]]):
        if sibling.position != position:
            sibling.position = position
            session.add(sibling)


def _parent(session: Session, kind: RowKind, study_id: int, parent_id: int | None) -> Any:
    if kind.parent_field is None:
        return None
    if parent_id is None:
        raise StructureInputError(kind.parent_field, f"a {kind.name} needs a parent.")
    return get_row(session, KINDS[PARENT_KIND[kind.name]], study_id, parent_id)


def _new_row(session: Session, kind: RowKind, study_id: int, parent: Any,
             values: Mapping[str, Any]) -> Any:
    fields = {**NEW_ROW_DEFAULTS.get(kind.name, {}), **values}
    if kind.parent_field:
        fields[kind.parent_field] = parent.id
    if kind.name == "step":
        fields.setdefault("kind", StepKind.IPL)
        fields.update(value=1.0, value_text=NEW_STEP_VALUE_TEXT)
    if kind.name == "node":
        fields.setdefault("number", _next_node_number(session, study_id))
    return kind.model(study_id=study_id, **fields)


def create_row(
    *, session: Session, study_id: int, kind_name: str, parent_id: int | None = None,
    after_id: int | None = None, values: Mapping[str, str] | None = None,
) -> Any:
    """Add a row (after `after_id`, else last); a new scenario comes with its initiating event."""
    get_study(session, study_id)
    kind = kind_of(kind_name)
    parent = _parent(session, kind, study_id, parent_id)
    given = dict(values or {})
    step_kind = _step_kind(given.pop("kind", "ipl")) if kind.name == "step" else None
    if step_kind == StepKind.INITIATING_EVENT:
        raise StructureInputError("kind", "a scenario has exactly one initiating event; "
                                  "change the value of the one it has.")
    checked = _read_text_fields(kind, given, creating=True)
    row = _new_row(session, kind, study_id, parent,
                   {**checked, **({"kind": step_kind} if step_kind else {})})
    after = get_row(session, kind, study_id, after_id) if after_id else None
    session.add(row)
    _place(session, kind, row, after)
    session.flush()
    if kind.name == "scenario":
        session.add(Step(study_id=study_id, scenario_id=row.id, value=None, position=0,
                         kind=StepKind.INITIATING_EVENT, value_text=""))
    session.commit()
    session.refresh(row)
    return row


def _step_kind(text: str) -> StepKind:
    try:
        return StepKind(text)
    except ValueError:
        known = ", ".join(k.value for k in StepKind)
        raise StructureInputError("kind", f"the step kind must be one of {known} "
                                  f"(got '{text}').") from None


def _next_node_number(session: Session, study_id: int) -> str:
    numbers = session.exec(select(Node.number).where(Node.study_id == study_id)).all()
    counted = [int(n) for n in numbers if n.strip().isdecimal()]
    return str(max(counted, default=0) + 1)


def _read_text_fields(kind: RowKind, changes: Mapping[str, str], *,
                      creating: bool = False) -> dict[str, str]:
    values = {}
    for field, text in changes.items():
        if field not in kind.text_limits:
            continue
        value = text.strip()
        if field in kind.required and not value:
            raise StructureInputError(field, f"the {kind.name} {field} is required.")
        if problem := length_problem(value, kind.text_limits[field]):
            raise StructureInputError(field, problem)
        values[field] = value
    missing = [f for f in kind.required if creating and f not in values]
    if missing:
        raise StructureInputError(missing[0], f"the {kind.name} {missing[0]} is required.")
    return values


def _read_category(session: Session, study_id: int, field: str, text: str) -> int | None:
    if not text.strip():  # a severity left blank: the scenario is incomplete until given
        return None
    category_id = read_row_id(text)
    category = session.get(SeverityCategory, category_id) if category_id else None
    if category is None or category.study_id != study_id:
        raise StructureInputError(field, f"choose one of the study's severity categories "
                                  f"(got '{text}').")
    return category.id


def _read_step_fields(row: Step, changes: Mapping[str, Any]) -> dict[str, Any]:
    values: dict[str, Any] = {}
    if "credited" in changes:
        sent = changes["credited"]
        last = sent[-1] if isinstance(sent, list | tuple) else sent
        values["credited"] = str(last).strip().lower() in ("true", "on", "1", "yes")
    if "value_text" in changes:
        try:
            parsed = parse_step_value(row.kind, str(changes["value_text"]), step_label(row))
        except LikelihoodInputError as err:
            raise StructureInputError("value_text", err.message) from None
        values.update(value=parsed.value, value_text=parsed.text)
    if "error_factor" in changes:
        sent = changes["error_factor"]
        text = str(sent[-1] if isinstance(sent, list | tuple) else sent)
        try:
            values["error_factor"] = read_typed_error_factor(text, f"{step_label(row)}: EF")
        except LikelihoodInputError as err:
            raise StructureInputError("error_factor", err.message) from None
    return values


def read_row_changes(session: Session, kind: RowKind, row: Any,
                 changes: Mapping[str, Any]) -> dict[str, Any]:
    """Validate and convert the sent fields of one row; unknown fields are ignored."""
    texts = {k: str(v[-1] if isinstance(v, list | tuple) else v) for k, v in changes.items()
             if k in kind.text_limits}
    values: dict[str, Any] = _read_text_fields(kind, texts)
    if kind.name == "scenario":
        for field in CATEGORY_FIELDS:
            if field in changes:
                values[field] = _read_category(session, row.study_id, field,
                                               str(changes[field]))
    if kind.name == "step":
        values.update(_read_step_fields(row, changes))
    return values


def move_row(*, session: Session, study_id: int, kind_name: str, row_id: int,
             offset: int) -> Any:
    """Move a row up (offset -1) or down (+1) among its siblings; at an end it stays put."""
    lock_study_order(session, study_id)
    kind = kind_of(kind_name)
    row = get_row(session, kind, study_id, row_id)
    ordered = siblings(session, kind, row)
    index = ordered.index(row)
    target = min(max(index + offset, 0), len(ordered) - 1)
    ordered.insert(target, ordered.pop(index))
    for position, sibling in enumerate(ordered):
        if sibling.position != position:
            sibling.position = position
            session.add(sibling)
    session.commit()
    session.refresh(row)
    return row


def node_id_of(session: Session, kind_name: str, row: Any) -> int:
    """The node a worksheet row sits under (the node itself is not loaded)."""
    while kind_name not in ("node", "deviation"):
        parent_field = KINDS[kind_name].parent_field or ""
        kind_name = {"deviation_id": "deviation", "scenario_id": "scenario"}[parent_field]
        row = session.get(KINDS[kind_name].model, getattr(row, parent_field))
    return int(row.id if kind_name == "node" else row.node_id)
