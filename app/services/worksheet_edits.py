"""Field edits on the worksheet: parse, validate, save, and recompute what the reply shows."""

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from sqlmodel import Session

from app.db.models import Step
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
from app.services.studies import NodeTotals, totals_of
from app.services.study_tree import NodeNode, NotFoundError, StudyTree, load_study_tree
from app.services.worksheet import (
    LATEST_EDITS,
    ScenarioView,
    find_node,
    plain_value,
    recommendations_by_scenario,
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


def _locate(tree: StudyTree, scenario_id: int) -> tuple[NodeNode, str]:
    for node_node in tree.nodes:
        node_number = node_node.node.number or str(node_node.node.id)
        for d_index, deviation_node in enumerate(node_node.deviations, start=1):
            for s_index, item in enumerate(deviation_node.scenarios, start=1):
                if item.scenario.id == scenario_id:
                    return node_node, f"{node_number}.{d_index}.{s_index}"
    raise NotFoundError(f"There is no scenario {scenario_id} in study {tree.study.id}.")


def scenario_reply(*, session: Session, study_id: int, scenario_id: int,
                   fallback: str = "", tree: StudyTree | None = None) -> ScenarioReply:
    """The scenario recomputed from what is saved, with its node's and the study's totals."""
    tree = tree or load_study_tree(session, study_id)
    node_node, number = _locate(tree, scenario_id)
    item = next(s for s in node_node.scenario_nodes() if s.scenario.id == scenario_id)
    links = recommendations_by_scenario(session, tree).get(scenario_id, ())
    return ScenarioReply(scenario_view(item, number, links, fallback), node_node.node.id or 0,
                         totals_of(node_node.scenario_nodes()), totals_of(tree.scenario_nodes()))


def node_reply(*, session: Session, study_id: int, node_id: int) -> ScenarioReply:
    """Only the totals, for edits that change no figure."""
    tree = load_study_tree(session, study_id)
    node_node = find_node(tree, node_id)
    return ScenarioReply(None, node_id, totals_of(node_node.scenario_nodes()),
                         totals_of(tree.scenario_nodes()))


def node_id_of(session: Session, kind_name: str, row: Any) -> int:
    """The node a worksheet row sits under."""
    while kind_name != "node":
        parent_field = KINDS[kind_name].parent_field or ""
        kind_name = {"node_id": "node", "deviation_id": "deviation",
                     "scenario_id": "scenario"}[parent_field]
        row = session.get(KINDS[kind_name].model, getattr(row, parent_field))
    return int(row.id)


def scenario_id_of(kind_name: str, row: Any) -> int | None:
    """The scenario a row belongs to (None for nodes and deviations)."""
    if kind_name == "scenario":
        return int(row.id)
    return getattr(row, "scenario_id", None)


def _reply_for(session: Session, kind_name: str, row: Any, fallback: str = "") -> ScenarioReply:
    scenario_id = scenario_id_of(kind_name, row)
    if scenario_id is None:
        return node_reply(session=session, study_id=row.study_id,
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
    said = plain_value(row) if sent == "value_text" else SAVED
    return FieldReply(field_id(kind_name, row_id, sent), said, "",
                      _reply_for(session, kind_name, row))
