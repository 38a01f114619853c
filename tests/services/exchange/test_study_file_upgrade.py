"""Study files of schema version 1 still import: the upgrade to version 2 (issue 9).

Version 2 adds what the method needs per step and `people_not_rated` per scenario. A version 1
modifier had no kind, so it reduced every receptor; the upgrade reads its kind from its words
(matching words is common practice, no source) so presence and fatality reduce people only.
"""

import json
from pathlib import Path

from sqlmodel import Session, select

from app.db.models import Step
from app.likelihood.types import ModifierKind, StepKind
from app.services.exchange.study_file import export_study, parse_study_file
from app.services.exchange.study_import import import_study_text
from app.services.exchange.study_upgrade import modifier_kind_from_words, upgrade_v1_to_v2

DEMO = Path(__file__).parents[3] / "sample_data" / "demo_study.json"


def version_1_file() -> dict:  # type: ignore[type-arg]
    """A minimal version 1 file: one scenario, three modifiers named in words."""
    modifier = {"kind": "conditional_modifier", "value": 0.5}
    return {
        "format": "tallyroom-study", "schema_version": 1,
        "study": {"title": "Version one"},
        "severity_categories": [{"ref": "C1", "name": "Fatality", "tolerable_frequency": 1e-5}],
        "nodes": [{"number": "1", "name": "Tank", "deviations": [{
            "guideword": "More", "parameter": "Level", "scenarios": [{
                "ref": "S1", "severity": "C1", "steps": [
                    {"kind": "initiating_event", "value": 0.1},
                    {**modifier, "description": "Ignition of the pool"},
                    {**modifier, "description": "Operator present in the area"},
                    {**modifier, "description": "Probability of fatality"},
                    {**modifier, "description": "Wind towards the road"},
                ]}]}]}],
    }


def test_each_modifier_kind_is_read_from_its_words() -> None:
    assert modifier_kind_from_words("Ignition of the pool") is ModifierKind.IGNITION
    assert modifier_kind_from_words("Occupancy of the pump bay") is ModifierKind.PRESENCE
    assert modifier_kind_from_words("Probability of injury") is ModifierKind.VULNERABILITY
    assert modifier_kind_from_words("Wind towards the road") is None


def test_a_version_1_file_is_upgraded_and_imports(session: Session) -> None:
    original = version_1_file()
    upgraded = upgrade_v1_to_v2(original)
    assert original["schema_version"] == 1  # the upgrade works on a copy
    steps = upgraded["nodes"][0]["deviations"][0]["scenarios"][0]["steps"]
    assert [s.get("modifier_kind") for s in steps] == [
        None, "ignition", "presence", "vulnerability", None]
    study = import_study_text(session, json.dumps(original))
    stored = session.exec(select(Step).where(Step.study_id == study.id)
                          .order_by(Step.position)).all()  # type: ignore[arg-type]
    assert [s.modifier_kind for s in stored if s.kind is StepKind.CONDITIONAL_MODIFIER] == [
        "ignition", "presence", "vulnerability", None]
    assert study.id is not None
    again = export_study(session, study.id)
    assert again["schema_version"] == 2
    assert parse_study_file(json.dumps(again)).schema_version == 2


def test_the_version_1_demo_and_its_revisions_upgrade(session: Session) -> None:
    data = json.loads(DEMO.read_text())
    data["schema_version"] = 1
    snapshot = {k: v for k, v in data.items() if k not in ("change_log", "revisions")}
    data["revisions"] = [{"label": "Rev 0", "frozen_at": "2026-01-01T00:00:00+00:00",
                          "snapshot": snapshot}]
    parsed = parse_study_file(json.dumps(data))
    assert parsed.revisions[0].snapshot.schema_version == 2
    kinds = {s.modifier_kind for n in parsed.nodes for d in n.deviations for sc in d.scenarios
             for s in sc.steps if s.kind is StepKind.CONDITIONAL_MODIFIER}
    assert ModifierKind.PRESENCE in kinds and ModifierKind.VULNERABILITY in kinds


def test_a_version_2_file_with_a_version_1_revision_snapshot_imports(session: Session) -> None:
    """Revisions frozen before the upgrade keep their version 1 snapshot in the database."""
    data = upgrade_v1_to_v2(version_1_file())
    snapshot = version_1_file()
    data["revisions"] = [{"label": "Rev 0", "frozen_at": "2026-01-01T00:00:00+00:00",
                          "snapshot": snapshot}]
    parsed = parse_study_file(json.dumps(data))
    assert parsed.revisions[0].snapshot.schema_version == 2


def test_version_2_fields_survive_export_and_import(session: Session) -> None:
    data = upgrade_v1_to_v2(version_1_file())
    scenario = data["nodes"][0]["deviations"][0]["scenarios"][0]
    scenario["people_not_rated"] = False
    scenario["steps"][4].update(modifier_kind="other", receptors=["environment", "people"])
    scenario["steps"].append({"kind": "ipl", "value": 0.01, "description": "Bund",
                              "ipl_type": "passive", "acts_after_sif": True,
                              "final_element_tag": "XV-1", "crew": "Shift A",
                              "time_available_minutes": 30,
                              "time_to_detect_and_act_minutes": 12})
    study = import_study_text(session, json.dumps(data))
    assert study.id is not None
    steps = export_study(session, study.id)["nodes"][0]["deviations"][0]["scenarios"][0]["steps"]
    assert steps[4]["receptors"] == ["people", "environment"]  # stored in receptor order
    assert {k: steps[5][k] for k in ("acts_after_sif", "final_element_tag", "crew",
                                     "time_available_minutes",
                                     "time_to_detect_and_act_minutes")} == {
        "acts_after_sif": True, "final_element_tag": "XV-1", "crew": "Shift A",
        "time_available_minutes": 30, "time_to_detect_and_act_minutes": 12}
