"""What changed in the estimate rounds and the team word scale between two study files.

A step's round is matched by its scenario's cause, the step's kind and description, and the
round's number; a word's round by its unit, word and number; a word of the scale by its unit
and word (case and runs of spaces ignored, as in comparison.py). The file's scenario refs
are renumbered per file, so they are never the key.
"""

from collections.abc import Iterator
from typing import Any

from app.likelihood.estimates import ESTIMATE_UNIT_LABELS, EstimateUnit
from app.likelihood.numbers import format_number
from app.likelihood.types import step_kind_words

# Any in this module: both sides are study-file JSON objects (the file boundary).

Row = dict[str, Any]
RoundKey = tuple[str, ...]
# (section, kind, where, field, before, after), made into comparison.Change by the caller.
RawChange = tuple[str, str, str, str, str, str]

ROUNDS, WORDS = "Estimate rounds", "Word scale"
ROUND_FIELDS = ("question", "state", "names_shown", "estimates", "agreed_method",
                "agreed_value", "agreed_basis", "dissents")
SEP = " \N{SINGLE RIGHT-POINTING ANGLE QUOTATION MARK} "


def _said(text: Any) -> str:
    return " ".join(str(text or "").split()).casefold()


def _steps_by_ref(study: Row) -> dict[str, tuple[str, list[Row]]]:
    return {s["ref"]: (s.get("cause") or s.get("consequence") or s["ref"], s.get("steps", []))
            for n in study.get("nodes", []) for d in n.get("deviations", [])
            for s in d.get("scenarios", [])}


def _keyed_rounds(study: Row) -> dict[RoundKey, tuple[str, Row]]:
    """Each round under its stable key, with the words that name it on the page."""
    steps = _steps_by_ref(study)
    keyed: dict[RoundKey, tuple[str, Row]] = {}
    for found in study.get("estimate_rounds", []):
        number = str(found["number"])
        if found.get("word") is not None:
            unit = ESTIMATE_UNIT_LABELS[EstimateUnit(found["unit"])]
            keyed[("word", found["unit"], _said(found["word"]), number)] = (
                f"Word '{found['word']}' ({unit}){SEP}round {number}", found)
            continue
        cause, scenario_steps = steps.get(found["scenario"], (found["scenario"], []))
        place = found["step"] - 1
        step = scenario_steps[place] if place < len(scenario_steps) else {}
        kind, description = step.get("kind", ""), step.get("description", "")
        words = step_kind_words(kind) if kind else f"step {found['step']}"
        keyed[("step", _said(cause), kind, _said(description), number)] = (
            f"'{cause}'{SEP}{words} '{description}'{SEP}round {number}", found)
    return keyed


def _shown(name: str, value: Any) -> str:
    if name == "estimates":
        return "; ".join(f"{e['person']}: {format_number(e['value'])}" for e in value or [])
    if name == "dissents":
        return "; ".join(f"{d['person']}: {d['reason']}" for d in value or [])
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float | int):
        return format_number(float(value))
    return str(value or "").replace("_", " ")


def _field_changes(section: str, where: str, old: Row, new: Row,
                   names: tuple[str, ...]) -> Iterator[RawChange]:
    for name in names:
        if old.get(name) != new.get(name):
            before, after = _shown(name, old.get(name)), _shown(name, new.get(name))
            if before == after:  # two figures hide the difference: show more
                before, after = repr(old.get(name)), repr(new.get(name))
            yield section, "changed", where, name, before, after


def _paired(old: dict[Any, tuple[str, Row]], new: dict[Any, tuple[str, Row]],
            section: str, names: tuple[str, ...]) -> Iterator[RawChange]:
    for key, (where, row) in old.items():
        if key not in new:
            yield section, "removed", where, "", "", ""
        else:
            yield from _field_changes(section, where, row, new[key][1], names)
    for key, (where, _row) in new.items():
        if key not in old:
            yield section, "added", where, "", "", ""


def _keyed_words(study: Row) -> dict[tuple[str, str], tuple[str, Row]]:
    return {(w["unit"], _said(w["word"])): (
        f"Word '{w['word']}' ({ESTIMATE_UNIT_LABELS[EstimateUnit(w['unit'])]})", w)
        for w in study.get("word_scale", [])}


def round_changes(before: Row, after: Row) -> list[RawChange]:
    """Rounds added, removed or changed (state, estimates, agreement, dissents), then the
    word scale's words added, removed or given another number."""
    changes = list(_paired(_keyed_rounds(before), _keyed_rounds(after), ROUNDS, ROUND_FIELDS))
    changes += _paired(_keyed_words(before), _keyed_words(after), WORDS, ("value",))
    return changes
