"""The change log pages: who changed what and when in words, newest first, filtered by date,
node, scenario and person, and downloadable as CSV."""

from datetime import UTC, datetime

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import ChangeLogEntry, Deviation
from app.db.tracking import AUTHOR_KEY
from tests.factories import make_scenario, make_scenario_tree, make_step
from tests.helpers import HX, TEST_AUTHOR, table_rows


def _log_rows(html: str) -> list[dict[str, str]]:
    header, *body = table_rows(html, "change-log")
    return [dict(zip(header, row, strict=True)) for row in body]


def _entry(session: Session, study_id: int, at: datetime, summary: str,
           scenario_id: int | None = None) -> None:
    session.add(ChangeLogEntry(study_id=study_id, at=at, author="Ilse", action="edit",
                               entity="scenario", field="notes", old_value="a", new_value="b",
                               summary=summary, scenario_id=scenario_id))
    session.commit()


def test_an_edit_shows_who_when_what_field_and_old_to_new_newest_first(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    scenario.consequence = "Toxic release"
    session.commit()
    rows = _log_rows(client.get(f"/studies/{scenario.study_id}/changes").text)
    newest = rows[0]
    assert (newest["Who"], newest["Change"], newest["Field"], newest["Old → new"]) == (
        TEST_AUTHOR, "changed", "Consequence", "Overfill and spill → Toxic release")
    assert newest["Item"] == "Scenario 1.1.1 — Level control fails high"
    assert newest["When (UTC)"].startswith(datetime.now(UTC).strftime("%Y-%m-%d"))
    assert [r["Change"] for r in rows][-1] == "added"  # the study's first row, oldest last


def test_a_value_typed_on_the_worksheet_is_logged_under_this_browsers_name(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    step = make_step(session, scenario, value=0.1, description="High level alarm")
    response = client.post(f"/studies/{scenario.study_id}/steps/{step.id}/value",
                           data={"value_text": "1 in 100"}, headers=HX)
    assert response.status_code == 200
    rows = _log_rows(client.get(f"/studies/{scenario.study_id}/changes").text)
    assert [(r["Who"], r["Field"], r["Old → new"]) for r in rows[:2]] == [
        (TEST_AUTHOR, "Value as typed", "(empty) → 1 in 100"), (TEST_AUTHOR, "Value", "0.1 → 0.01")]
    assert rows[0]["Item"] == rows[1]["Item"] == "Step IPL 1 of scenario 1.1.1 — High level alarm"


def test_values_typed_while_the_field_was_invalid_are_not_logged(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    step = make_step(session, scenario, value=0.1, description="High level alarm")
    url = f"/studies/{scenario.study_id}/steps/{step.id}/value"
    for typed, status in (("1 in", 422), ("1 in 0", 422), ("2", 422), ("1 in 50", 200)):
        assert client.post(url, data={"value_text": typed}, headers=HX).status_code == status
    value_entries = session.exec(
        select(ChangeLogEntry.old_value, ChangeLogEntry.new_value)
        .where(ChangeLogEntry.entity == "step", ChangeLogEntry.field == "value")
    ).all()
    assert list(value_entries) == [("0.1", "0.02")]
    typed_entries = session.exec(
        select(ChangeLogEntry.new_value).where(ChangeLogEntry.field == "value_text")).all()
    assert "1 in 0" not in typed_entries and "2" not in typed_entries


def test_an_invalid_action_value_is_never_logged(client: TestClient, session: Session) -> None:
    study_id = make_scenario_tree(session).study_id
    before = len(session.exec(select(ChangeLogEntry)).all())
    client.post(f"/studies/{study_id}/actions", data={"text": "Trip", "expected_rrf": "-5"},
                headers=HX)
    assert len(session.exec(select(ChangeLogEntry)).all()) == before


def test_the_date_filter_keeps_both_ends_of_the_range(client: TestClient, session: Session) -> None:
    study_id = make_scenario_tree(session).study_id
    for day, hour in ((9, 23), (10, 0), (11, 23), (12, 0)):
        _entry(session, study_id, datetime(2026, 11, day, hour, 30, tzinfo=UTC),
               f"change on the {day}th")
    html = client.get(f"/studies/{study_id}/changes",
                      params={"from": "2026-11-10", "to": "2026-11-11"}).text
    assert [r["Item"] for r in _log_rows(html)] == [  # invented entries name no live row
        "Scenario change on the 11th (no longer in the study)",
        "Scenario change on the 10th (no longer in the study)"]
    assert [r["When (UTC)"][:10] for r in _log_rows(html)] == ["2026-11-11", "2026-11-10"]
    assert "2 changes · newest first · times in UTC" in html


def test_the_scenario_view_shows_only_that_scenarios_changes(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    other = make_scenario(session, session.get(Deviation, scenario.deviation_id),
                          cause="Pump runs on")
    make_step(session, scenario, description="Relief valve")
    other.notes = "not this one"
    session.commit()
    html = client.get(f"/studies/{scenario.study_id}/changes?scenario_id={scenario.id}").text
    assert "Change log · Scenario 1.1.1 — Level control fails high" in html
    items = [r["Item"] for r in _log_rows(html)]
    assert items == ["Step IPL 1 of scenario 1.1.1 — Relief valve",
                     "Step IE 1 of scenario 1.1.1 — Control loop failure",
                     "Scenario 1.1.1 — Level control fails high"]


def test_a_deleted_scenarios_history_stays_reachable(client: TestClient, session: Session) -> None:
    scenario = make_scenario_tree(session)
    scenario_id, study_id = scenario.id, scenario.study_id
    session.delete(scenario)
    session.commit()
    html = client.get(f"/studies/{study_id}/changes?scenario_id={scenario_id}").text
    assert "Change log · a scenario no longer in the study" in html
    newest = _log_rows(html)[0]
    assert (newest["Change"], newest["Item"]) == (
        "deleted", "Scenario 'Level control fails high' (no longer in the study)")


@pytest.mark.parametrize(
    ("params", "field_id", "message"),
    [
        ({"from": "11/10/2026"}, "filter-from",
         "the &#39;from&#39; date must be written YYYY-MM-DD (got &#39;11/10/2026&#39;)."),
        ({"to": "yesterday"}, "filter-to", "the &#39;to&#39; date must be written YYYY-MM-DD"),
        ({"from": "2026-11-12", "to": "2026-11-10"}, "filter-to",
         "the &#39;to&#39; date 2026-11-10 is before the &#39;from&#39; date 2026-11-12."),
        ({"scenario_id": "S5"}, "filter-scenario", "the scenario must be chosen from the list"),
        ({"node_id": "one"}, "filter-node", "the node must be chosen from the list"),
    ],
)
def test_an_unreadable_filter_is_a_422_with_the_typed_text_kept(
    client: TestClient, session: Session, params: dict[str, str], field_id: str, message: str
) -> None:
    study_id = make_scenario_tree(session).study_id
    response = client.get(f"/studies/{study_id}/changes", params=params, headers=HX)
    assert response.status_code == 422
    assert f'id="{field_id}-error"' in response.text and message in response.text
    for typed in params.values():
        assert f'value="{typed}"' in response.text
    assert 'id="change-log"' not in response.text


def test_the_scenario_list_names_each_scenario_by_its_number(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    html = client.get(f"/studies/{scenario.study_id}/changes").text
    option = f'<option value="{scenario.id}">Scenario 1.1.1 — Level control fails high</option>'
    assert option in html


def test_a_deviation_edit_made_by_a_nameless_browser_says_so(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    session.info[AUTHOR_KEY] = ""
    deviation = session.get(Deviation, scenario.deviation_id)
    deviation.description = "Tank overfills"
    session.commit()
    newest = _log_rows(client.get(f"/studies/{scenario.study_id}/changes").text)[0]
    assert (newest["Who"], newest["Field"]) == ("(no name given)", "Description")
