"""Upgrade an older study file's JSON to the current schema version before validation.

Version 1 → 2 (issue 9): steps gained the fields the method needs (acts_after_sif,
modifier_kind, receptors, cause_type, …) and scenarios `people_not_rated`; every one has a
default, so a version 1 file reads as before except for one thing. A version 1 conditional
modifier had no kind and reduced every receptor, so a presence or fatality probability shrank the
environment and asset frequencies too. The upgrade gives each modifier the kind its description
names (ignition, presence/occupancy, injury/fatality), so those default to people only; a
modifier whose words name none keeps no kind (it still applies to every receptor) and the team
should say what it stands for. Matching words is common practice, no source.
"""

import copy
from typing import Any

from app.likelihood.types import ModifierKind, StepKind

# Any in this module: study files are JSON objects (the file boundary).

KIND_WORDS: tuple[tuple[ModifierKind, tuple[str, ...]], ...] = (
    (ModifierKind.IGNITION, ("ignition", "ignites", "ignite")),
    (ModifierKind.PRESENCE, ("presence", "present", "occupancy", "occupied")),
    (ModifierKind.VULNERABILITY, ("fatality", "fatal", "injury", "injured", "death",
                                  "vulnerability")),
)


def modifier_kind_from_words(description: str) -> ModifierKind | None:
    """The kind a modifier's description names, first match in KIND_WORDS order; else None."""
    words = description.casefold()
    for kind, names in KIND_WORDS:
        if any(name in words for name in names):
            return kind
    return None


def _upgrade_step(step: dict[str, Any]) -> None:
    if step.get("kind") != StepKind.CONDITIONAL_MODIFIER.value or "modifier_kind" in step:
        return
    kind = modifier_kind_from_words(str(step.get("description", "")))
    if kind is not None:
        step["modifier_kind"] = kind.value


def _steps(data: dict[str, Any]) -> list[dict[str, Any]]:
    return [step
            for node in data.get("nodes") or [] if isinstance(node, dict)
            for deviation in node.get("deviations") or [] if isinstance(deviation, dict)
            for scenario in deviation.get("scenarios") or [] if isinstance(scenario, dict)
            for step in scenario.get("steps") or [] if isinstance(step, dict)]


def upgrade_v1_to_v2(data: dict[str, Any]) -> dict[str, Any]:
    """A version 2 copy of a version 1 file (revision snapshots inside upgraded the same way)."""
    upgraded = copy.deepcopy(data)
    upgraded["schema_version"] = 2
    for step in _steps(upgraded):
        _upgrade_step(step)
    for revision in upgraded.get("revisions") or []:
        snapshot = revision.get("snapshot") if isinstance(revision, dict) else None
        if isinstance(snapshot, dict) and snapshot.get("schema_version") == 1:
            revision["snapshot"] = upgrade_v1_to_v2(snapshot)
    return upgraded


def _has_v1_snapshot(data: dict[str, Any]) -> bool:
    return any(isinstance(r, dict) and isinstance(r.get("snapshot"), dict)
               and r["snapshot"].get("schema_version") == 1
               for r in data.get("revisions") or [])


def upgrade_study_data(data: dict[str, Any]) -> dict[str, Any]:
    """The file brought to the current version; the same object when nothing needs it.

    A version 2 file may hold version 1 revision snapshots (revisions frozen before the
    upgrade are stored as they were), so those are upgraded too.
    """
    if data.get("schema_version") == 1:
        return upgrade_v1_to_v2(data)
    if _has_v1_snapshot(data):
        upgraded = copy.deepcopy(data)
        for revision in upgraded["revisions"]:
            snapshot = revision.get("snapshot") if isinstance(revision, dict) else None
            if isinstance(snapshot, dict) and snapshot.get("schema_version") == 1:
                revision["snapshot"] = upgrade_v1_to_v2(snapshot)
        return upgraded
    return data
