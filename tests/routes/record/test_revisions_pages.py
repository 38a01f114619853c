"""Revisions: freeze, view read-only, compare with hand-computed before/after numbers."""

import json
import math
import re
from datetime import date

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import (
    ActionStatus,
    ChangeLogEntry,
    Deviation,
    Participant,
    Recommendation,
    Revision,
    Scenario,
    SessionDay,
    Study,
)
from app.services.record.comparison import SEP
from app.services.record.revisions import freeze_revision
from tests.factories import make_deviation, make_node, make_scenario, make_scenario_tree, make_step
from tests.helpers import HX, TEST_AUTHOR, table_rows


def _freeze(session: Session, study_id: int, label: str = "Rev A") -> Revision:
    return freeze_revision(session=session, study_id=study_id, frozen_by=TEST_AUTHOR,
                           values={"label": label, "signed_off_by": "Ilse Marrow-Quaye"})


def _numbers_by_row(html: str, table_class: str) -> list[tuple[str, str, str]]:
    """(mitigated, target, gap) of every scenario row, read from data-field cells."""
    import re

    cells = re.findall(r'data-field="(mitigated|target|gap)">([^<]*)<', html)
    return [tuple(v for _, v in cells[i:i + 3]) for i in range(0, len(cells), 3)]  # type: ignore[misc]


def test_freezing_stores_the_study_file_and_who_signed_it_off(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    response = client.post(f"/studies/{scenario.study_id}/revisions", follow_redirects=False,
                           data={"label": " Rev A ", "signed_off_by": "Ilse Marrow-Quaye",
                                 "note": "Issued for review"})
    assert response.status_code == 303
    revision = session.exec(select(Revision)).one()
    assert response.headers["location"].endswith(f"/revisions/{revision.id}")
    assert (revision.label, revision.note, revision.frozen_by, revision.signed_off_by) == (
        "Rev A", "Issued for review", TEST_AUTHOR, "Ilse Marrow-Quaye")
    assert revision.signed_off_at is not None
    snapshot = json.loads(revision.snapshot)
    assert snapshot["format"] == "tallyroom-study" and "change_log" not in snapshot
    assert snapshot["nodes"][0]["deviations"][0]["scenarios"][0]["cause"] == scenario.cause
    logged = session.exec(select(ChangeLogEntry).where(ChangeLogEntry.action == "freeze")).one()
    assert logged.summary == "revision 'Rev A' frozen, signed off by Ilse Marrow-Quaye"


@pytest.mark.parametrize(
    ("data", "field_id", "message"),
    [
        ({"label": "", "signed_off_by": "I. M-Q"}, "revision-label",
         "a revision label is required"),
        ({"label": "rev a", "signed_off_by": "I. M-Q"}, "revision-label",
         "this study already has a revision &#39;rev a&#39;; labels are unique in a study."),
        ({"label": "Rev B", "signed_off_by": "  "}, "revision-signed-off-by",
         "say who signed this revision off."),
        ({"label": "R" * 61, "signed_off_by": "I. M-Q"}, "revision-label", "at most 60 characters"),
        ({"label": "Rev B", "signed_off_by": "I. M-Q", "note": "n" * 2001}, "revision-note",
         "at most 2000 characters"),
    ],
)
def test_a_bad_freeze_is_refused_at_its_field_with_the_typed_text_kept(
    client: TestClient, session: Session, data: dict[str, str], field_id: str, message: str
) -> None:
    study_id = make_scenario_tree(session).study_id
    _freeze(session, study_id, "Rev A")
    response = client.post(f"/studies/{study_id}/revisions", data=data, headers=HX)
    assert response.status_code == 422
    assert f'id="{field_id}-error"' in response.text and message in response.text
    assert f'value="{data["signed_off_by"].strip() and data["signed_off_by"]}"' in response.text
    assert len(session.exec(select(Revision)).all()) == 1


def test_the_freeze_form_offers_this_browsers_name_as_the_signer(
    client: TestClient, session: Session
) -> None:
    study_id = make_scenario_tree(session).study_id
    page = client.get(f"/studies/{study_id}/revisions").text
    signer = 'id="revision-signed-off-by" name="signed_off_by" type="text"'
    assert f'{signer} value="{TEST_AUTHOR}"' in page


def test_the_frozen_view_shows_the_live_numbers_at_freeze_time_and_no_edit_controls(
    client: TestClient, demo_study: Study, session: Session
) -> None:
    live = client.get(f"/studies/{demo_study.id}").text
    revision = _freeze(session, demo_study.id)
    frozen = client.get(f"/studies/{demo_study.id}/revisions/{revision.id}").text
    assert _numbers_by_row(frozen, "frozen-scenarios") == _numbers_by_row(live, "scenario-table")
    assert len(_numbers_by_row(frozen, "frozen-scenarios")) >= 15
    assert "signed off by Ilse Marrow-Quaye" in frozen and "Frozen " in frozen
    # The two forms make the revision's report and its summary; nothing on the page edits it.
    forms = re.findall(r'<form[^>]*action="([^"]+)"', frozen.split('<main id="main">')[1])
    assert forms == [f"http://testserver/studies/{demo_study.id}/report-jobs"] * 2
    assert re.findall(r'hx-post="([^"]+)"', frozen) == forms


def test_the_frozen_view_keeps_its_numbers_after_the_live_study_changes(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)  # IE 0.1/yr, target 1e-5/yr
    step = make_step(session, scenario, value=0.1)
    revision = _freeze(session, scenario.study_id)
    step.value = 0.001
    session.commit()
    frozen = client.get(f"/studies/{scenario.study_id}/revisions/{revision.id}").text
    # 0.1 x 0.1 = 1e-2 per year; gap log10(1e-2 / 1e-5) = +3.0
    assert _numbers_by_row(frozen, "frozen-scenarios") == [("1.0e-2", "1.0e-5", "+3.0")]


def test_comparing_after_a_step_value_change_shows_the_hand_computed_effect(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)  # IE 0.1/yr, target 1e-5/yr
    step = make_step(session, scenario, value=0.1, description="Operator response to alarm")
    revision = _freeze(session, scenario.study_id)
    step.value = 0.01
    session.commit()
    page = client.get(f"/studies/{scenario.study_id}/revisions/compare",
                      params={"from": revision.id, "to": "live"})
    assert page.status_code == 200
    steps = table_rows(page.text, "changes-steps")
    assert steps[1] == ["changed", f"Node 1{SEP}More Level{SEP}'Level control fails high'{SEP}IPL "
                        "'Operator response to alarm'", "Value", "1.0e-1", "1.0e-2"]
    # Before: 0.1 x 0.1 = 1e-2/yr, gap log10(1e-2/1e-5) = +3.0.
    # After: 0.1 x 0.01 = 1e-3/yr, gap +2.0; change log10(1e-3 / 1e-2) = -1.0 orders.
    assert math.isclose(math.log10(1e-3 / 1e-2), -1.0)
    effect = table_rows(page.text, "scenario-effects")[1]
    assert effect[1:4] == ["1.0e-2 → 1.0e-3", "+3.0 → +2.0", "-1.0"]


def test_an_uncredited_layer_shows_as_a_credited_change(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    step = make_step(session, scenario, value=0.1, description="Alarm")
    revision = _freeze(session, scenario.study_id)
    step.credited = False
    session.commit()
    page = client.get(f"/studies/{scenario.study_id}/revisions/compare",
                      params={"from": revision.id}).text
    assert table_rows(page, "changes-steps")[1][2:] == ["Credited", "yes", "no"]
    assert table_rows(page, "scenario-effects")[1][1:4] == [
        "1.0e-2 → 1.0e-1", "+3.0 → +4.0", "+1.0"]


def _two_nodes(session: Session) -> tuple[Study, Deviation, Scenario]:
    first = make_scenario_tree(session)
    study = session.get(Study, first.study_id)
    deviation = make_deviation(session, make_node(session, study, number="2", name="Pump"),
                               guideword="No", parameter="Flow")
    return study, session.get(Deviation, first.deviation_id), make_scenario(
        session, deviation, cause="Pump trips")


def test_added_and_removed_scenarios_show_up_between_two_revisions(
    client: TestClient, session: Session
) -> None:
    study, first_deviation, leaving = _two_nodes(session)
    old = _freeze(session, study.id, "Rev A")
    session.delete(leaving)  # its steps go by the database's cascade
    make_scenario(session, first_deviation, cause="Suction valve closed")
    new = _freeze(session, study.id, "Rev B")
    page = client.get(f"/studies/{study.id}/revisions/compare",
                      params={"from": old.id, "to": new.id}).text
    assert "From revision Rev A to revision Rev B" in page
    assert table_rows(page, "changes-scenarios")[1:] == [
        ["added", f"Node 1{SEP}More Level{SEP}'Suction valve closed'", "—", "—", "—"],
        ["removed", f"Node 2{SEP}No Flow{SEP}'Pump trips'", "—", "—", "—"],
    ]
    # Each has IE 0.1/yr and no layers: 1e-1/yr against 1e-5/yr, a gap of +4.0 orders.
    assert [row[:3] for row in table_rows(page, "scenario-effects")[1:]] == [
        [f"Node 1{SEP}More Level{SEP}'Suction valve closed' (added)", "— → 1.0e-1", "— → +4.0"],
        [f"Node 2{SEP}No Flow{SEP}'Pump trips' (removed)", "1.0e-1 → —", "+4.0 → —"],
    ]


def test_an_edited_cause_reads_as_a_change_not_a_removal(
    client: TestClient, session: Session
) -> None:
    study, _first_deviation, scenario = _two_nodes(session)
    old = _freeze(session, study.id, "Rev A")
    scenario.cause = "Pump trips on low suction pressure"
    session.commit()
    page = client.get(f"/studies/{study.id}/revisions/compare", params={"from": old.id}).text
    assert table_rows(page, "changes-scenarios")[1:] == [
        ["changed", f"Node 2{SEP}No Flow{SEP}'Pump trips on low suction pressure'", "Cause",
         "Pump trips", "Pump trips on low suction pressure"]]
    assert "scenario-effects" not in page


@pytest.mark.parametrize(
    ("params", "field_id", "message"),
    [
        ({}, "compare-from", "choose a revision to compare."),
        ({"from": "A"}, "compare-from", "a revision is chosen by its number (got &#39;A&#39;)."),
        ({"from": "99999"}, "compare-from", "there is no revision 99999 of this study."),
        ({"from": "REV", "to": "99999"}, "compare-to", "there is no revision 99999"),
        ({"from": "REV", "to": "Rev B"}, "compare-to", "chosen by its number"),
    ],
)
def test_an_unreadable_comparison_choice_is_a_422_naming_the_rule(
    client: TestClient, session: Session, params: dict[str, str], field_id: str, message: str
) -> None:
    study_id = make_scenario_tree(session).study_id
    revision = _freeze(session, study_id)
    params = {k: (str(revision.id) if v == "REV" else v) for k, v in params.items()}
    response = client.get(f"/studies/{study_id}/revisions/compare", params=params)
    assert response.status_code == 422
    assert f'id="{field_id}-error"' in response.text and message in response.text


def test_a_revision_of_another_study_is_a_404(client: TestClient, session: Session) -> None:
    revision = _freeze(session, make_scenario_tree(session).study_id)
    other = make_scenario_tree(session).study_id
    assert client.get(f"/studies/{other}/revisions/{revision.id}").status_code == 404


def test_actions_participants_and_session_days_are_part_of_the_comparison(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    study_id = scenario.study_id
    action = Recommendation(study_id=study_id, text="Add a high-level trip", owner="A. Vale")
    person = Participant(study_id=study_id, name="Tom Reed", role="Operator")
    session.add_all([action, person])
    session.commit()
    old = _freeze(session, study_id, "Rev A")
    action.status = ActionStatus.DONE
    person.role = "Shift supervisor"
    session.add(SessionDay(study_id=study_id, day=date(2026, 11, 11)))
    session.commit()
    page = client.get(f"/studies/{study_id}/revisions/compare", params={"from": old.id}).text
    assert table_rows(page, "changes-actions")[1:] == [
        ["changed", "Action 'Add a high-level trip'", "Status", "open", "done"]]
    assert table_rows(page, "changes-participants")[1:] == [
        ["changed", "Participant Tom Reed", "Role", "Operator", "Shift supervisor"]]
    assert table_rows(page, "changes-session-days")[1:] == [
        ["added", "Session day 2026-11-11", "—", "—", "—"]]
