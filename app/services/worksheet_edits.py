"""Field edits on the worksheet: parse, validate, save, and recompute what the reply shows."""

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from sqlmodel import Session

from app.db.models import Node, Step
from app.likelihood.numbers import format_number
from app.likelihood.types import LikelihoodInputError
from app.services.structure import (
    KINDS,
    StructureInputError,
    get_row,
    kind_of,
    parse_step_value,
    step_label,
    update_row,
)
from app.services.studies import NodeTotals
from app.services.study_totals import study_totals
from app.services.study_tree import NodeNode, NotFoundError, ScenarioNode, load_node_tree
from app.services.worksheet import (
    LATEST_EDITS,
    ScenarioView,
    plain_value,
    recommendations_of_node,
    scenario_view,
)

FIELD_PREFIX = {"node": "node", "deviation": "dev", "scenario": "sc", "step": "step",
                "safeguard": "sg"}
SAVED = "saved"


def field_id(kind_name: str, row_id: int, field: str) -> str:
    """The HTML id of a worksheet field ("step-12-value_text")."""
    return f"{FIELD_PREFIX[kind_name]}-{row_id}-{field}"


@dataclass(frozen=True)
class ScenarioReply:
    """A scenario's recomputed view (None for node or deviation edits) and the totals."""

    scenario: ScenarioView | None
    node_id: int
    node_totals: NodeTotals
    study_totals: NodeTotals


@dataclass(frozen=True)
class FieldReply:
    """The answer to one field edit: the line under the field and the recomputed figures."""

    field_id: str
    said: str
    error: str
    reply: ScenarioReply


def _locate(node_node: NodeNode, scenario_id: int) -> tuple[ScenarioNode, str]:
    node_number = node_node.node.number or str(node_node.node.id)
    for d_index, deviation_node in enumerate(node_node.deviations, start=1):
        for s_index, item in enumerate(deviation_node.scenarios, start=1):
            if item.scenario.id == scenario_id:
                return item, f"{node_number}.{d_index}.{s_index}"
    raise NotFoundError(f"There is no scenario {scenario_id} in node {node_node.node.id}.")


def located_scenario(*, session: Session, study_id: int, scenario_id: int,
                     fallback: str = "") -> tuple[ScenarioView, Node]:
    """One scenario recomputed and numbered within its node; only that node is loaded."""
    scenario = get_row(session, kind_of("scenario"), study_id, scenario_id)
    node_id = node_id_of(session, "scenario", scenario)
    node_node = load_node_tree(session, study_id, node_id).node
    item, number = _locate(node_node, scenario_id)
    links = recommendations_of_node(session, node_id).get(scenario_id, ())
    return scenario_view(item, number, links, fallback), node_node.node


def scenario_reply(*, session: Session, study_id: int, scenario_id: int,
                   fallback: str = "") -> ScenarioReply:
    """The scenario recomputed from what is saved, with its node's and the study's totals."""
    view, node = located_scenario(session=session, study_id=study_id, scenario_id=scenario_id,
                                  fallback=fallback)
    return totals_reply(session=session, study_id=study_id, node_id=node.id or 0, scenario=view)


def totals_reply(*, session: Session, study_id: int, node_id: int,
                 scenario: ScenarioView | None = None) -> ScenarioReply:
    """The node's and the study's totals (and the scenario's view, when one was edited)."""
    totals = study_totals(session, study_id)
    return ScenarioReply(scenario, node_id, totals.of_node(node_id), totals.study)


def node_id_of(session: Session, kind_name: str, row: Any) -> int:
    """The node a worksheet row sits under (the node itself is not loaded)."""
    while kind_name not in ("node", "deviation"):
        parent_field = KINDS[kind_name].parent_field or ""
        kind_name = {"deviation_id": "deviation", "scenario_id": "scenario"}[parent_field]
        row = session.get(KINDS[kind_name].model, getattr(row, parent_field))
    return int(row.id if kind_name == "node" else row.node_id)


def scenario_id_of(kind_name: str, row: Any) -> int | None:
    """The scenario a row belongs to (None for nodes and deviations)."""
    if kind_name == "scenario":
        return int(row.id)
    return getattr(row, "scenario_id", None)


def _reply_for(session: Session, kind_name: str, row: Any, fallback: str = "") -> ScenarioReply:
    scenario_id = scenario_id_of(kind_name, row)
    if scenario_id is None:
        return totals_reply(session=session, study_id=row.study_id,
                            node_id=node_id_of(session, kind_name, row))
    return scenario_reply(session=session, study_id=row.study_id, scenario_id=scenario_id,
                          fallback=fallback)


def edit_step_value(*, session: Session, study_id: int, step_id: int, text: str,
                    client: str = "", seq: int | None = None) -> FieldReply | None:
    """Save a step's value if it parses; None when a newer edit of it was already seen."""
    step: Step = get_row(session, kind_of("step"), study_id, step_id)
    if not LATEST_EDITS.accept(step_id, client, seq):
        return None
    fid = field_id("step", step_id, "value_text")
    try:
        parsed = parse_step_value(str(step.kind), text, step_label(step))
    except LikelihoodInputError as err:
        session.rollback()
        fallback = f"{step_label(step)}: using last valid value {format_number(step.value)}"
        return FieldReply(fid, "", err.message, _reply_for(session, "step", step, fallback))
    if (step.value, step.value_text) != (parsed.value, parsed.text):
        step.value, step.value_text = parsed.value, parsed.text
        session.add(step)
        session.commit()
    return FieldReply(fid, parsed.plain, "", _reply_for(session, "step", step))


def edit_field(*, session: Session, study_id: int, kind_name: str, row_id: int,
               changes: Mapping[str, Any]) -> FieldReply:
    """Save the sent fields of a row, or say which rule the first bad one breaks."""
    kind = kind_of(kind_name)
    row = get_row(session, kind, study_id, row_id)
    sent = next(iter(changes), "")
    try:
        row = update_row(session=session, study_id=study_id, kind_name=kind_name,
                         row_id=row_id, changes=changes)
    except StructureInputError as err:
        session.rollback()
        return FieldReply(field_id(kind_name, row_id, err.field), "", err.message,
                          _reply_for(session, kind_name, row))
    said = plain_value(row) if (kind_name, sent) == ("step", "value_text") else SAVED
    return FieldReply(field_id(kind_name, row_id, sent), said, "",
                      _reply_for(session, kind_name, row))
