"""Whole-study export to and import from the versioned JSON file format."""

import json
from collections import defaultdict
from collections.abc import Collection
from typing import Any

from pydantic import ValidationError
from sqlalchemy import String, type_coerce
from sqlmodel import Session, col, select

from app.db.models import (
    Attendance,
    ChangeLogEntry,
    Deviation,
    Node,
    Participant,
    Recommendation,
    RecommendationScenario,
    Safeguard,
    Scenario,
    SessionDay,
    SeverityCategory,
    Step,
    saved_id,
)
from app.db.queries import fetch_plain_rows, plain_rows_of_study
from app.db.snapshot_parts import SnapshotPartsError
from app.services.exchange.study_file_revisions import expand_revision_parts, export_revisions
from app.services.exchange.study_file_rounds import export_rounds, export_word_scale
from app.services.exchange.study_schema import (
    FILE_FORMAT,
    READABLE_VERSIONS,
    SCHEMA_VERSION,
    StudyFile,
)
from app.services.exchange.study_upgrade import upgrade_study_data
from app.services.study.step_fields import stored_receptors
from app.services.study.tree import get_study
from app.settings import get_settings

# Any in this module: study-file rows are JSON objects and table rows of several models (the file
# boundary).

# The format itself nests 18 levels at most (a revision snapshot's proof-test inputs).
MAX_NESTING = 40


class StudyFileError(ValueError):
    """A study file that cannot be imported; the message says where and why."""


def parse_study_file(raw: str | bytes) -> StudyFile:
    """Validate a JSON study file, turning every problem into one readable message.

    Every check is linear in the file's size; the file is read strictly (no "1" for a number,
    no "yes" for a boolean), and its size is checked before the rows are validated.
    """
    text = _decoded(raw)
    try:
        data = json.loads(text)
    except json.JSONDecodeError as err:
        raise StudyFileError(f"not a JSON file: {err}") from err
    except RecursionError:
        data = None  # deeper than the parser goes: said by the nesting rule below
    if data is None or _nesting(data) > MAX_NESTING:
        raise StudyFileError(f"the file nests more than {MAX_NESTING} levels deep; a study "
                             f"file nests far less")
    _check_format_and_version(data)
    expanded = _with_revision_snapshots(data)
    _check_size(expanded)
    upgraded = upgrade_study_data(expanded)
    if upgraded is not data:  # parts put together or an older version: validate the result
        text = json.dumps(upgraded)
    del data, upgraded  # the parsed tree goes before validation builds the rows again
    try:
        return StudyFile.model_validate_json(text, strict=True)
    except ValidationError as err:
        raise StudyFileError(_describe_validation(err)) from err


def _with_revision_snapshots(data: dict[str, Any]) -> dict[str, Any]:
    """The file with each revision's snapshot put together from the parts it names."""
    try:
        return expand_revision_parts(data)
    except SnapshotPartsError as err:
        raise StudyFileError(str(err)) from err


def _decoded(raw: str | bytes) -> str:
    if isinstance(raw, str):
        return raw
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        raise StudyFileError(f"not a JSON file: the text is not UTF-8 ({err})") from err


def _nesting(data: Any) -> int:
    """How deep arrays and objects nest (without recursion, so any depth is measured)."""
    deepest, stack = 0, [(data, 1)]
    while stack:
        value, depth = stack.pop()
        children = value.values() if isinstance(value, dict) else value
        if isinstance(value, dict | list):
            deepest = max(deepest, depth)
            stack.extend((child, depth + 1) for child in children
                         if isinstance(child, dict | list))
    return deepest


def _items(value: Any, key: str) -> list[Any]:
    """`value[key]` when it is a list of objects (shape errors are left to validation)."""
    found = value.get(key) if isinstance(value, dict) else None
    return [item for item in found if isinstance(item, dict)] if isinstance(found, list) else []


def _check_size(data: dict[str, Any]) -> None:
    """Refuse a study, or any revision snapshot in it, over the scenario limits (settings)."""
    settings = get_settings()
    studies = [("the study", data)] + [
        (f"revision {i}'s snapshot", rev.get("snapshot")) for i, rev in
        enumerate(_items(data, "revisions"))]
    for where, study in studies:
        total = 0
        for node in _items(study, "nodes"):
            count = sum(len(_items(d, "scenarios")) for d in _items(node, "deviations"))
            if count > settings.max_import_scenarios_per_node:
                limit = settings.max_import_scenarios_per_node
                raise StudyFileError(
                    f"{where}: node {node.get('number')!r} has {count:,} scenarios; a node "
                    f"may have at most {limit:,} (split it into smaller nodes)")
            total += count
        if total > settings.max_import_scenarios:
            raise StudyFileError(f"{where} has {total:,} scenarios; a study file may have at "
                                 f"most {settings.max_import_scenarios:,}")
        _check_round_count(where, study, settings.max_import_scenarios)


def _check_round_count(where: str, study: Any, limit: int) -> None:
    """As many estimate rounds, estimates and words, each, as a file may have scenarios."""
    rounds = _items(study, "estimate_rounds")
    estimates = sum(len(_items(found, "estimates")) for found in rounds)
    words = len(_items(study, "word_scale"))
    for count, what in ((len(rounds), "estimate rounds"), (estimates, "estimates"),
                        (words, "words on the word scale")):
        if count > limit:
            raise StudyFileError(f"{where} has {count:,} {what}; a study file may have at "
                                 f"most {limit:,} (as many as scenarios)")


def _check_format_and_version(data: Any) -> None:
    # Said plainly before field-level validation, which would bury it in a list of problems.
    if not isinstance(data, dict) or data.get("format") != FILE_FORMAT:
        raise StudyFileError(
            f"not a Tallyroom study file: the top level must be a JSON object with "
            f"\"format\": \"{FILE_FORMAT}\""
        )
    version = data.get("schema_version")
    if version not in READABLE_VERSIONS or isinstance(version, bool):
        readable = " and ".join(str(v) for v in READABLE_VERSIONS)
        raise StudyFileError(
            f"schema_version {version!r} is not supported: this Tallyroom reads study files "
            f"of schema versions {readable}"
        )


def _describe_validation(err: ValidationError) -> str:
    lines = []
    for problem in err.errors()[:10]:
        where = ".".join(str(part) for part in problem["loc"]) or "file"
        lines.append(f"{where}: {problem['msg']}")
    more = err.error_count() - len(lines)
    return "; ".join(lines) + (f"; and {more} more problems" if more > 0 else "")


# Fixed key orders: a loaded row's attribute order varies, and the file must not.
HEADER_FIELDS = ("title", "facility", "scope", "revision_label", "frequency_unit",
                 "criteria_basis", "error_factor_default_initiating_event",
                 "error_factor_default_enabling_condition",
                 "error_factor_default_conditional_modifier", "error_factor_default_ipl")
STEP_FIELDS = ("description", "value", "value_text", "basis", "credited", "ipl_type",
               "system_tag", "response_time_minutes", "sil_claimed", "typical_key")
# Schema version 2's step fields, in StepRow's order (receptors goes between as a list).
METHOD_FIELDS = ("acts_after_sif", "modifier_kind")
CHECK_FIELDS = ("cause_type", "final_element_tag", "alarm_on_bpcs", "crew",
                "per_opportunity_probability", "opportunities_per_year",
                "time_available_minutes", "time_to_detect_and_act_minutes")


def _fields(row: Any, names: tuple[str, ...]) -> dict[str, Any]:
    return {name: getattr(row, name) for name in names}


def scenario_ref(index: int) -> str:
    """The file ref of the study's index-th scenario (0-based) in worksheet order: S1, S2, ..."""
    return f"S{index + 1}"


def _by_parent(rows: list[Any], parent: str) -> dict[int, list[Any]]:
    grouped: dict[int, list[Any]] = defaultdict(list)
    for row in rows:
        grouped[getattr(row, parent)].append(row)
    return grouped


def _ordered(session: Session, model: Any, study_id: int) -> list[Any]:
    """The study's rows of `model` in display order, as plain rows: the file reads only
    columns, and building ORM objects was half the time of exporting a large study."""
    return fetch_plain_rows(session, plain_rows_of_study(model, study_id))


def export_study(session: Session, study_id: int, *, with_history: bool = True,
                 with_nodes: bool = True, node_ids: Collection[int] | None = None,
                 ) -> dict[str, Any]:
    """The whole study as a plain dict in the file format (see study_schema).

    `with_nodes` False: no nodes and no revision snapshots, only what the workbook's other
    sheets read (it takes the scenarios from the stored results, one node at a time).
    `node_ids`: `nodes` holds only these nodes, in the study's order (a freeze builds only
    the nodes changed since its last one; scenario refs stay the whole study's)."""
    study = get_study(session, study_id)
    categories = _ordered(session, SeverityCategory, study_id)
    category_refs = {c.id: f"C{i}" for i, c in enumerate(categories, 1)}
    if not with_nodes:
        nodes_out, scenario_refs = [], _scenario_refs(session, study_id)
    elif node_ids is not None:
        scenario_refs = _scenario_refs(session, study_id)
        nodes_out = _export_nodes(session, study_id, category_refs, scenario_refs,
                                  set(node_ids))[0]
    else:
        nodes_out, scenario_refs = _export_nodes(session, study_id, category_refs)
    participants = _ordered(session, Participant, study_id)
    people_refs = {p.id: f"P{i}" for i, p in enumerate(participants, 1)}
    data: dict[str, Any] = {
        "format": "tallyroom-study",
        "schema_version": SCHEMA_VERSION,
        "invented": study.invented,
        "study": _fields(study, HEADER_FIELDS),
        "severity_categories": [
            {"ref": category_refs[c.id], "name": c.name, "description": c.description,
             "tolerable_frequency": c.tolerable_frequency, "receptor": str(c.receptor)}
            for c in categories
        ],
        "nodes": nodes_out,
        "recommendations": _export_actions(session, study_id, scenario_refs),
        "participants": [
            {"ref": people_refs[p.id], "name": p.name, "role": p.role,
             "discipline": p.discipline, "company": p.company}
            for p in participants
        ],
        "session_days": _export_days(session, study_id, people_refs),
        "estimate_rounds": export_rounds(session, study_id, scenario_refs),
        "word_scale": export_word_scale(session, study_id),
    }
    if with_history:
        data["change_log"] = _export_log(session, study_id, scenario_refs)
        if with_nodes:
            data.update(export_revisions(session, study_id, live=data))
    return data


def _scenario_refs(session: Session, study_id: int) -> dict[int, str]:
    """Each scenario's file ref (S1, S2, ...) in worksheet order, read as ids only."""
    placed = fetch_plain_rows(session, select(Scenario.id).join(
        Deviation, col(Deviation.id) == col(Scenario.deviation_id)).join(
        Node, col(Node.id) == col(Deviation.node_id)).where(
        col(Scenario.study_id) == study_id).order_by(
        col(Node.position), col(Node.id), col(Deviation.position), col(Deviation.id),
        col(Scenario.position), col(Scenario.id)))
    return {row.id: scenario_ref(index) for index, row in enumerate(placed)}


# The columns the file reads (no timestamps, whose conversion was a tenth of reading them).
NODE_COLUMNS = ("id", "number", "name", "design_intent", "drawing_reference")
DEVIATION_COLUMNS = ("id", "node_id", "guideword", "parameter", "description")
SAFEGUARD_COLUMNS = ("scenario_id", "description", "note")


def _of_nodes(model: Any, node_ids: set[int]) -> Any:
    """The condition that a row of `model` (node, deviation, scenario, step or safeguard)
    belongs to one of these nodes."""
    ids = sorted(node_ids)
    if model is Node:
        return col(Node.id).in_(ids)
    if model is Deviation:
        return col(Deviation.node_id).in_(ids)
    deviations = select(Deviation.id).where(col(Deviation.node_id).in_(ids))
    if model is Scenario:
        return col(Scenario.deviation_id).in_(deviations)
    scenarios = select(Scenario.id).where(col(Scenario.deviation_id).in_(deviations))
    return model.scenario_id.in_(scenarios)


def _export_nodes(
    session: Session, study_id: int, category_refs: dict[int | None, str],
    refs: dict[int, str] | None = None, only: set[int] | None = None,
) -> tuple[list[dict[str, Any]], dict[int, str]]:
    """The nodes in the file's form and each scenario's ref; `only` some nodes, whose
    scenarios then take their refs from `refs` (the whole study's)."""
    def rows(model: Any, names: tuple[str, ...]) -> list[Any]:
        statement = plain_rows_of_study(model, study_id, names)
        return fetch_plain_rows(session, statement if only is None
                                else statement.where(_of_nodes(model, only)))

    deviations = _by_parent(rows(Deviation, DEVIATION_COLUMNS), "node_id")
    scenarios = _by_parent(rows(Scenario, SCENARIO_COLUMNS), "deviation_id")
    steps = _steps_by_scenario(session, study_id, None if only is None
                               else _of_nodes(Step, only))
    safeguards: dict[int, list[dict[str, Any]]] = defaultdict(list)
    for scenario_id, description, note in rows(Safeguard, SAFEGUARD_COLUMNS):
        safeguards[scenario_id].append({"description": description, "note": note})
    scenario_refs: dict[int, str] = {}
    nodes_out = []
    for node in rows(Node, NODE_COLUMNS):
        deviations_out = []
        for deviation in deviations[node.id]:
            scenarios_out = []
            for scenario in scenarios[deviation.id]:
                scenario_id = scenario[0]
                scenario_refs[scenario_id] = (scenario_ref(len(scenario_refs)) if refs is None
                                              else refs[scenario_id])
                scenarios_out.append(
                    _export_scenario(tuple(scenario), scenario_refs[scenario_id], category_refs,
                                     steps[scenario_id], safeguards[scenario_id])
                )
            deviations_out.append(
                {"guideword": deviation.guideword, "parameter": deviation.parameter,
                 "description": deviation.description, "scenarios": scenarios_out}
            )
        nodes_out.append(
            {"number": node.number, "name": node.name, "design_intent": node.design_intent,
             "drawing_reference": node.drawing_reference, "deviations": deviations_out}
        )
    return nodes_out, scenario_refs


SCENARIO_COLUMNS = ("id", "deviation_id", "cause", "consequence", "notes",
                    "severity_category_id", "environment_category_id", "asset_category_id",
                    "people_not_rated")


def _export_scenario(
    scenario: tuple[Any, ...], ref: str, category_refs: dict[int | None, str],
    steps: list[dict[str, Any]], safeguards: list[dict[str, Any]],
) -> dict[str, Any]:
    """One scenario from its SCENARIO_COLUMNS, read by place (a plain row's attribute
    look-ups were a third of building a large study's scenarios)."""
    _, _, cause, consequence, notes, severity, environment, asset, not_rated = scenario
    return {
        "ref": ref,
        "cause": cause,
        "consequence": consequence,
        "notes": notes,
        "severity": category_refs.get(severity),
        "environment_severity": category_refs.get(environment),
        "asset_severity": category_refs.get(asset),
        "people_not_rated": not_rated,
        "steps": steps,
        "safeguards": safeguards,
    }


# A step's keys in the file, in StepRow's order, so a re-imported revision snapshot (dumped
# from the validated rows) exports byte for byte the same; read as columns of that name.
STEP_KEYS = ("kind", *STEP_FIELDS, "proof_test", *METHOD_FIELDS, "receptors", *CHECK_FIELDS,
             "error_factor")


def _steps_by_scenario(session: Session, study_id: int,
                       condition: Any = None) -> dict[int, list[dict[str, Any]]]:
    """Each scenario's steps in the file's form, read as the file's columns only (no row
    objects, no timestamps) and laid out by position. The kind is read as its stored text
    (the StepKind round trip was a tenth of a large study's build)."""
    grouped: dict[int, list[dict[str, Any]]] = defaultdict(list)
    statement = plain_rows_of_study(Step, study_id, ("scenario_id", *STEP_KEYS))
    if condition is not None:
        statement = statement.where(condition)
    kind_text = type_coerce(Step.__table__.c.kind, String)  # type: ignore[attr-defined]
    rows = fetch_plain_rows(session, statement.with_only_columns(
        statement.selected_columns[0], kind_text, *statement.selected_columns[2:]))
    proof_at, receptors_at = STEP_KEYS.index("proof_test"), STEP_KEYS.index("receptors")
    receptor_lists: dict[str, list[str] | None] = {}  # a handful of distinct stored texts
    for row in rows:
        values: Any = row[1:]
        if values[proof_at] is not None or values[receptors_at] is not None:
            values = list(values)
            if values[proof_at]:
                values[proof_at] = json.loads(values[proof_at])
            if (text := values[receptors_at]) is not None:
                if text not in receptor_lists:
                    receptor_lists[text] = stored_receptors(text)
                found = receptor_lists[text]
                values[receptors_at] = None if found is None else list(found)
        grouped[row[0]].append(dict(zip(STEP_KEYS, values, strict=True)))
    return grouped


def _export_actions(
    session: Session, study_id: int, scenario_refs: dict[int, str]
) -> list[dict[str, Any]]:
    actions = _ordered(session, Recommendation, study_id)
    links = session.exec(
        select(RecommendationScenario).where(
            col(RecommendationScenario.recommendation_id).in_([a.id for a in actions])
        )
    ).all()
    # Worksheet order, not id order, so a re-imported study (new ids) lists them the same way.
    order = {scenario_id: index for index, scenario_id in enumerate(scenario_refs)}
    addressed = _by_parent(sorted(links, key=lambda link: order[link.scenario_id]),
                           "recommendation_id")
    return [
        {"text": a.text, "owner": a.owner,
         "due_date": a.due_date.isoformat() if a.due_date else None,
         "status": str(a.status), "status_reason": a.status_reason,
         "expected_rrf": a.expected_rrf,
         "scenarios": [scenario_refs[link.scenario_id] for link in addressed[a.id]]}
        for a in actions
    ]


def _export_days(
    session: Session, study_id: int, people_refs: dict[int | None, str]
) -> list[dict[str, Any]]:
    days = session.exec(
        select(SessionDay).where(SessionDay.study_id == study_id).order_by(
            col(SessionDay.day), col(SessionDay.id))
    ).all()
    present = session.exec(
        select(Attendance).where(col(Attendance.session_day_id).in_([d.id for d in days]))
    ).all()
    by_day = _by_parent(sorted(present, key=lambda a: a.participant_id), "session_day_id")
    return [
        {"day": d.day.isoformat(), "note": d.note,
         "attendees": [people_refs[a.participant_id] for a in by_day[saved_id(d.id)]]}
        for d in days
    ]


def _export_log(
    session: Session, study_id: int, scenario_refs: dict[int, str]
) -> list[dict[str, Any]]:
    entries = session.exec(
        select(ChangeLogEntry).where(ChangeLogEntry.study_id == study_id).order_by(
            col(ChangeLogEntry.id))
    ).all()
    return [
        {"at": e.at.isoformat(), "author": e.author, "action": e.action, "entity": e.entity,
         "field": e.field, "old_value": e.old_value, "new_value": e.new_value,
         "summary": e.summary,
         "scenario": scenario_refs.get(e.scenario_id) if e.scenario_id else None}
        for e in entries
    ]
