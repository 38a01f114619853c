"""The change log in a person's words: field names, row places, values without database ids.

The log stores what the database saw (entity, field, old and new text); this module turns an
entry into what an auditor reads: "Severity" instead of `severity_category_id`, "Step IPL 2 of
scenario 2.1.1 — High level alarm" instead of a row id, a category's name instead of its id and
a proof-test calculation as one line instead of its JSON.
"""

import json
import re
from dataclasses import dataclass
from typing import Any

from app.db.ids import read_row_id
from app.db.models import ChangeLogEntry
from app.likelihood.numbers import format_number
from app.likelihood.types import StepKind
from app.likelihood.typical import typical_by_key
from app.services.record.change_places import StudyPlaces

# Any in this module: a stored proof-test record is JSON (a boundary).

FIELD_WORDS: dict[str, str] = {
    "title": "Title", "facility": "Facility", "scope": "Scope",
    "revision_label": "Revision label", "frequency_unit": "Frequency unit",
    "criteria_basis": "Criteria basis", "invented": "Invented data", "name": "Name",
    "description": "Description", "tolerable_frequency": "Tolerable frequency",
    "receptor": "Receptor", "position": "Order", "number": "Number",
    "design_intent": "Design intent", "drawing_reference": "Drawing reference",
    "guideword": "Guideword", "parameter": "Parameter", "node_id": "Node",
    "cause": "Cause", "consequence": "Consequence", "notes": "Notes",
    "deviation_id": "Deviation", "severity_category_id": "Severity",
    "environment_category_id": "Environmental severity", "asset_category_id": "Asset severity",
    "kind": "Step kind", "value": "Value", "value_text": "Value as typed", "basis": "Basis",
    "credited": "Credited", "ipl_type": "IPL type", "system_tag": "System tag",
    "response_time_minutes": "Response time (minutes)", "sil_claimed": "SIL claimed",
    "typical_key": "Typical-value row", "proof_test": "Proof-test inputs",
    "scenario_id": "Scenario", "note": "Note", "text": "Action text", "owner": "Owner",
    "due_date": "Due date", "status": "Status", "status_reason": "Status reason",
    "expected_rrf": "Expected RRF", "role": "Role", "discipline": "Discipline",
    "company": "Company", "day": "Date", "scenarios": "Scenarios addressed",
    "error_factor": "Error factor (EF)",
    "error_factor_default_initiating_event": "Default EF for initiating events",
    "error_factor_default_enabling_condition": "Default EF for enabling conditions",
    "error_factor_default_conditional_modifier": "Default EF for conditional modifiers",
    "error_factor_default_ipl": "Default EF for IPLs",
}  # fmt: skip

CHANGE_WORDS = {"create": "added", "edit": "changed", "delete": "deleted", "link": "linked",
                "unlink": "unlinked", "freeze": "frozen"}
CATEGORY_FIELDS = {"severity_category_id", "environment_category_id", "asset_category_id"}
ENTITY_WORDS = {"session date": "Session date", "severity category": "Severity category"}
# describe() in app/db/tracking.py names a row without text by its id: "step #12".
_ID_MENTION = re.compile(r"\s*#\d+")


@dataclass(frozen=True)
class ReadableEntry:
    """One change as the log page and its CSV show it."""

    entry_id: int
    action: str
    when: str
    who: str
    change: str
    item: str
    field: str
    old: str
    new: str
    shows_values: bool


def field_words(field: str) -> str:
    """'Severity' for severity_category_id; an unknown column in words without its '_id'."""
    if not field:
        return ""
    if field in FIELD_WORDS:
        return FIELD_WORDS[field]
    return field.removesuffix("_id").replace("_", " ").capitalize()


def proof_test_summary(stored: str) -> str:
    """'1oo2, λDU 2.0e-6/h, proof test every 8760 h, coverage 90 %: PFDavg 1.1e-3'."""
    try:
        data: dict[str, Any] = json.loads(stored)
        parts = [str(data["architecture"]), f"λDU {format_number(float(data['lambda_du']))}/h",
                 f"proof test every {float(data['proof_test_interval_hours']):g} h"]
        coverage = float(data.get("proof_test_coverage", 1.0))
        if coverage < 1:
            parts.append(f"coverage {coverage * 100:g} %")
        return ", ".join(parts) + f": PFDavg {format_number(float(data['pfd_avg']))}"
    except (ValueError, KeyError, TypeError):
        return "calculator inputs (not readable)"


def value_words(field: str, text: str | None, places: StudyPlaces) -> str:
    """A stored old or new value as a person reads it."""
    if text is None or text == "":
        return "(empty)"
    if field in CATEGORY_FIELDS:
        return places.category_name(text)
    if field == "node_id":
        return places.node_name(text)
    if field == "deviation_id":
        return places.deviation_name(text)
    if field == "scenario_id":
        return places.scenario_name(found) if (found := read_row_id(text)) else text
    if field == "proof_test":
        return proof_test_summary(text)
    if field == "kind" and text in StepKind._value2member_map_:
        return StepKind(text).label
    if field == "typical_key":
        row = typical_by_key(text)
        return f"{row.label} ({row.citation or row.source})" if row else text
    if text in ("True", "False"):
        return "yes" if text == "True" else "no"
    if field == "status":
        return text.replace("_", " ")
    return text


def item_words(entry: ChangeLogEntry, places: StudyPlaces) -> str:
    """The row by its place and text; a deleted row by the words it had."""
    named = places.name_of(entry.entity, entry.entity_id)
    if named:
        return named
    kind = ENTITY_WORDS.get(entry.entity, entry.entity.capitalize())
    summary = _ID_MENTION.sub("", entry.summary or "").strip()
    words = summary.removeprefix(entry.entity).strip()
    if not words:
        return f"{kind} (no longer in the study)"
    return f"{kind} {words} (no longer in the study)"


def readable_entry(entry: ChangeLogEntry, places: StudyPlaces) -> ReadableEntry:
    """One stored entry in words."""
    shows_values = entry.action in ("edit", "link", "unlink")
    field = entry.field or ""
    if entry.action in ("link", "unlink") and entry.scenario_id is not None:
        field = "scenario_id"  # the linked scenario by its place, whatever text was stored
    return ReadableEntry(
        entry_id=entry.id or 0, action=entry.action, when=entry.at.strftime("%Y-%m-%d %H:%M:%S"),
        who=entry.author or "(no name given)", change=CHANGE_WORDS.get(entry.action, entry.action),
        item=item_words(entry, places), field=field_words(entry.field or ""),
        old=_linked_or_value(entry, field, entry.old_value, places) if shows_values else "",
        new=_linked_or_value(entry, field, entry.new_value, places) if shows_values else "",
        shows_values=shows_values,
    )


def _linked_or_value(entry: ChangeLogEntry, field: str, text: str | None,
                     places: StudyPlaces) -> str:
    if field == "scenario_id" and entry.action in ("link", "unlink") and text:
        return places.scenario_name(entry.scenario_id or 0)
    return value_words(field, text, places)
