"""The pure comparison of two study files: matching rules and scenario effects (no database)."""

import copy
import math
from typing import Any

from app.services.record.comparison import SEP, diff_studies, match_rows, scenario_numbers


def _study(**changes: Any) -> dict[str, Any]:
    """A minimal study file: one category, one node, one deviation, two scenarios (invented)."""
    study: dict[str, Any] = {
        "study": {"title": "Invented study", "facility": "", "scope": "", "revision_label": "A",
                  "criteria_basis": ""},
        "severity_categories": [
            {"ref": "C1", "name": "Serious injury", "description": "", "receptor": "people",
             "tolerable_frequency": 1e-4},
            {"ref": "C2", "name": "Major spill", "description": "", "receptor": "environment",
             "tolerable_frequency": 1e-5},
        ],
        "nodes": [{"number": "1", "name": "Drum", "design_intent": "", "drawing_reference": "",
                   "deviations": [{"guideword": "More", "parameter": "Level", "description": "",
                                   "scenarios": [_scenario("S1", "Valve sticks open"),
                                                 _scenario("S2", "Pump runs on")]}]}],
    }
    study.update(changes)
    return study


def _scenario(ref: str, cause: str) -> dict[str, Any]:
    return {"ref": ref, "cause": cause, "consequence": "Overfill", "notes": "",
            "severity": "C1", "environment_severity": None, "asset_severity": None,
            "safeguards": [],
            "steps": [{"kind": "initiating_event", "description": "Cause", "value": 0.1,
                       "credited": True},
                      {"kind": "ipl", "description": "Trip", "value": 0.01, "credited": True}]}


def _key(row: dict[str, Any]) -> str:
    return str(row["k"])


def test_rows_pair_by_key_first_then_by_position_then_stay_unpaired() -> None:
    before = [{"k": "a"}, {"k": "b"}, {"k": "c"}]
    after = [{"k": "c"}, {"k": "B2"}, {"k": "a"}, {"k": "d"}]
    pairs = match_rows(before, after, _key)
    assert [(o and o["k"], n and n["k"]) for o, n in pairs] == [
        ("a", "a"), ("b", "B2"), ("c", "c"), (None, "d")]


def test_duplicate_keys_pair_in_order_of_appearance() -> None:
    pairs = match_rows([{"k": "x", "n": 1}, {"k": "x", "n": 2}], [{"k": "x", "n": 3}], _key)
    assert [(o and o["n"], n and n["n"]) for o, n in pairs] == [(1, 3), (2, None)]


def test_a_scenario_is_computed_against_its_most_demanding_category() -> None:
    scenario = _scenario("S1", "Valve sticks open") | {"environment_severity": "C2"}
    numbers = scenario_numbers(scenario, {c["ref"]: c for c in _study()["severity_categories"]})
    # 0.1 x 0.01 = 1e-3/yr; governing target min(1e-4, 1e-5) = 1e-5; gap log10(100) = +2.
    assert math.isclose(numbers.mitigated_frequency or 0, 1e-3)
    assert numbers.tolerable_frequency == 1e-5
    assert math.isclose(numbers.gap_orders or 0, 2.0)


def test_identical_files_have_no_differences() -> None:
    diff = diff_studies(_study(), copy.deepcopy(_study()))
    assert (diff.changes, diff.effects) == ([], [])


def test_a_stricter_criterion_moves_every_scenario_that_uses_it() -> None:
    after = _study()
    after["severity_categories"][0]["tolerable_frequency"] = 1e-6
    diff = diff_studies(_study(), after)
    assert [(c.section, c.where, c.field, c.before, c.after) for c in diff.changes] == [
        ("Criteria", "Category 'Serious injury'", "tolerable_frequency", "1.0e-4", "1.0e-6")]
    # Both scenarios: 1e-3/yr against 1e-4 (gap +1.0) then against 1e-6 (gap +3.0).
    assert [(round(e.before.gap_orders, 6), round(e.after.gap_orders, 6))  # type: ignore[union-attr]
            for e in diff.effects] == [(1.0, 3.0), (1.0, 3.0)]
    assert [e.orders_change for e in diff.effects] == [0.0, 0.0]


def test_deviations_match_ignoring_case_and_spacing_and_text_edits_are_changes() -> None:
    after = _study()
    deviation = after["nodes"][0]["deviations"][0]
    deviation["guideword"], deviation["description"] = "more", "Drum overfills"
    deviation["scenarios"][0]["steps"].append(
        {"kind": "conditional_modifier", "description": "Person present", "value": 0.5,
         "credited": True})
    diff = diff_studies(_study(), after)
    assert [(c.section, c.kind, c.field) for c in diff.changes] == [
        ("Deviations", "changed", "guideword"), ("Deviations", "changed", "description"),
        ("Steps", "added", "")]
    effect = diff.effects[0]
    # 1e-3/yr x 0.5 = 5e-4/yr: log10(0.5) = -0.301 orders.
    assert math.isclose(effect.orders_change or 0, math.log10(0.5))


def test_a_new_node_lists_its_deviations_and_scenarios_as_added() -> None:
    after = _study()
    extra = copy.deepcopy(after["nodes"][0])
    extra["number"], extra["name"] = "2", "Pump"
    after["nodes"].append(extra)
    diff = diff_studies(_study(), after)
    assert [(c.section, c.kind, c.where) for c in diff.changes] == [
        ("Nodes", "added", "Node 2 · Pump"),
        ("Deviations", "added", f"Node 2{SEP}More Level"),
        ("Scenarios", "added", f"Node 2{SEP}More Level{SEP}'Valve sticks open'"),
        ("Scenarios", "added", f"Node 2{SEP}More Level{SEP}'Pump runs on'"),
    ]
    assert [e.before for e in diff.effects] == [None, None]


def test_safeguards_and_header_fields_are_compared() -> None:
    after = _study()
    after["study"]["title"] = "Invented study, issue 2"
    after["nodes"][0]["deviations"][0]["scenarios"][1]["safeguards"] = [
        {"description": "Sight glass", "note": ""}]
    diff = diff_studies(_study(), after)
    assert [(c.section, c.kind, c.field or c.where) for c in diff.changes] == [
        ("Study", "changed", "title"),
        ("Safeguards", "added", f"Node 1{SEP}More Level{SEP}'Pump runs on'{SEP}'Sight glass'"),
    ]


def _record(**changes: Any) -> dict[str, Any]:
    """The minimal study with actions, participants and session days (invented)."""
    return _study(
        recommendations=[{"text": "Add a high-level trip", "owner": "A. Vale",
                          "due_date": "2027-01-31", "status": "open", "status_reason": "",
                          "expected_rrf": 100, "scenarios": ["S1"]}],
        participants=[{"ref": "P1", "name": "Ilse Marr", "role": "Facilitator",
                       "discipline": "", "company": ""},
                      {"ref": "P2", "name": "Tom Reed", "role": "Operator", "discipline": "",
                       "company": ""}],
        session_days=[{"day": "2026-11-10", "note": "Node 1", "attendees": ["P1"]}],
        **changes)


def test_actions_participants_and_session_days_are_compared() -> None:
    before = _record()
    after = copy.deepcopy(before)
    action = after["recommendations"][0]
    action.update(status="done", owner="B. Stroud", scenarios=["S1", "S2"])
    after["recommendations"].append({"text": "Write an operating procedure", "owner": "",
                                     "due_date": None, "status": "open", "status_reason": "",
                                     "expected_rrf": None, "scenarios": []})
    after["participants"][1]["role"] = "Shift supervisor"
    del after["participants"][0]
    after["session_days"][0]["attendees"] = ["P2"]
    after["session_days"].append({"day": "2026-11-11", "note": "", "attendees": []})
    changes = {(c.section, c.kind, c.where, c.field, c.before, c.after)
               for c in diff_studies(before, after).changes}
    assert changes == {
        ("Actions", "changed", "Action 'Add a high-level trip'", "owner", "A. Vale", "B. Stroud"),
        ("Actions", "changed", "Action 'Add a high-level trip'", "status", "open", "done"),
        ("Actions", "changed", "Action 'Add a high-level trip'", "scenarios",
         "Valve sticks open", "Pump runs on; Valve sticks open"),
        ("Actions", "added", "Action 'Write an operating procedure'", "", "", ""),
        ("Participants", "removed", "Participant Ilse Marr", "", "", ""),
        ("Participants", "changed", "Participant Tom Reed", "role", "Operator",
         "Shift supervisor"),
        ("Session days", "changed", "Session day 2026-11-10", "attendees", "Ilse Marr",
         "Tom Reed"),
        ("Session days", "added", "Session day 2026-11-11", "", "", ""),
    }


def test_scenario_refs_renumbered_between_files_are_not_a_change() -> None:
    before = _record()
    after = copy.deepcopy(before)
    scenarios = after["nodes"][0]["deviations"][0]["scenarios"]
    scenarios[0]["ref"], scenarios[1]["ref"] = "S9", "S8"
    after["recommendations"][0]["scenarios"] = ["S9"]
    assert [c for c in diff_studies(before, after).changes if c.section == "Actions"] == []


def test_a_typed_error_factor_and_a_study_default_show_as_changes() -> None:
    before = _study()
    after = copy.deepcopy(before)
    after["study"]["error_factor_default_ipl"] = 3.0
    after["nodes"][0]["deviations"][0]["scenarios"][0]["steps"][1]["error_factor"] = 10.0
    diff = diff_studies(before, after)
    assert [(c.field, c.before, c.after) for c in diff.changes] == [
        ("error_factor_default_ipl", "—", "3.0e0"), ("error_factor", "—", "1.0e1")]
