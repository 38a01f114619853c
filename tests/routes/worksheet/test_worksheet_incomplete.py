"""An incomplete scenario on every page and in every export: said as such, never a number.

A scenario added on the worksheet has no initiating frequency and no severity until the team
gives them (app/likelihood/completeness.py; common practice, no source). Every page that
computes answers 200 and says "incomplete"; once both are given the figures appear: 1e-3 /yr
against the factory's 1e-5 /yr is 100 times too frequent, a gap of +2.0 orders (by hand).
"""

import io

import pytest
from fastapi.testclient import TestClient
from openpyxl import load_workbook
from sqlmodel import Session, select

from app.db.models import Scenario, Step, Study
from app.likelihood.types import StepKind
from app.services.record.revisions import freeze_revision
from tests.factories import first_category, make_scenario_tree
from tests.helpers import HX, TEST_AUTHOR, attrs_of, figures, text_of


@pytest.fixture
def added(client: TestClient, session: Session) -> Scenario:
    """A scenario added through the worksheet beside a complete one."""
    complete = make_scenario_tree(session)
    response = client.post(f"/studies/{complete.study_id}/scenarios", headers=HX,
                           data={"parent_id": complete.deviation_id, "cause": "Seal leaks"})
    assert response.status_code == 200
    return session.exec(select(Scenario).where(Scenario.cause == "Seal leaks")).one()


def _initiating(session: Session, scenario: Scenario) -> Step:
    return session.exec(select(Step).where(Step.scenario_id == scenario.id,
                                           Step.kind == StepKind.INITIATING_EVENT)).one()


def _give_both(client: TestClient, session: Session, scenario: Scenario) -> str:
    """Type the frequency and choose the severity as the worksheet sends them; the reply."""
    event = _initiating(session, scenario)
    typed = client.post(f"/studies/{scenario.study_id}/steps/{event.id}/value", headers=HX,
                        data={"value_text": "1 in 1000", "orig_value_text": "",
                              "version": event.version})
    assert typed.status_code == 200
    assert "Incomplete: no severity yet" in figures(typed.text, scenario.id or 0)["incomplete"]
    session.expire_all()
    study = scenario.study_id
    fresh = session.get(Scenario, scenario.id)
    assert fresh is not None
    owner = session.get(Study, study)
    assert owner is not None
    category = first_category(session, owner)
    chosen = client.post(f"/studies/{study}/scenarios/{scenario.id}", headers=HX,
                         data={"severity_category_id": category.id,
                               "orig_severity_category_id": "", "version": fresh.version})
    assert chosen.status_code == 200
    return chosen.text


def test_the_worksheet_marks_the_row_and_the_results_incomplete(
    client: TestClient, added: Scenario
) -> None:
    page = client.get(f"/studies/{added.study_id}/worksheet", follow_redirects=True)
    assert page.status_code == 200
    assert text_of(page.text, f"scenario-{added.id}-state") == "◌ incomplete"
    shown = figures(page.text, added.id or 0)
    assert set(shown) == {"incomplete"}  # no frequency, target, gap or SIL at all
    select_at = page.text.index(f'id="sc-{added.id}-severity_category_id"')
    assert '<option value="" selected>— not given yet —</option>' in page.text[select_at:]
    assert text_of(page.text, f"step-{_step_id(page.text, added)}-value_text-said") == \
        "not given yet"


def _step_id(html: str, scenario: Scenario) -> str:
    marker = f'id="steps-{scenario.id}"'
    rest = html[html.index(marker):]
    return rest.split('id="step-row-', 1)[1].split('"', 1)[0]


def test_the_room_view_says_incomplete_and_shows_no_sil(
    client: TestClient, added: Scenario
) -> None:
    client.post(f"/studies/{added.study_id}/focus", data={"scenario_id": added.id})
    page = client.get(f"/studies/{added.study_id}/room").text
    assert attrs_of(page, "room-scenario")["data-scenario"] == str(added.id)
    assert "Incomplete: no initiating event frequency and no severity yet" in page
    assert 'id="room-sil"' not in page and "SIL 4" not in page


def test_overview_and_risk_picture_count_it_apart(client: TestClient, added: Scenario) -> None:
    overview = client.get(f"/studies/{added.study_id}")
    assert overview.status_code == 200
    assert 'data-total="incomplete">1<' in overview.text
    risk = client.get(f"/studies/{added.study_id}/risk")
    assert risk.status_code == 200
    for place in ("Ranking", "Sums", "SIL counts"):
        assert f"{place}: 1 incomplete scenario left out" in risk.text
    assert text_of(risk.text, "incomplete-list").startswith("1 Feed drum: Seal leaks")


def test_step_details_of_an_empty_initiating_event_open(
    client: TestClient, session: Session, added: Scenario
) -> None:
    event = _initiating(session, added)
    assert client.get(f"/studies/{added.study_id}/steps/{event.id}/details").status_code == 200


def test_every_export_says_incomplete_and_never_fails(
    client: TestClient, added: Scenario
) -> None:
    base = f"/studies/{added.study_id}"
    csv_text = client.get(f"{base}/export.csv").content.decode("utf-8-sig")
    assert "incomplete: no initiating event frequency and no severity yet" in csv_text
    book = load_workbook(io.BytesIO(client.get(f"{base}/export.xlsx").content))
    statuses = [row[19] for row in book["Scenarios"].iter_rows(min_row=2, values_only=True)]
    assert statuses[1] == "incomplete: no initiating event frequency and no severity yet"
    data = client.get(f"{base}/export.json").json()
    row = data["nodes"][0]["deviations"][0]["scenarios"][1]
    assert row["severity"] is None and row["steps"][0]["value"] is None
    pdf = client.get(f"{base}/export.pdf")
    assert pdf.status_code == 200 and pdf.content.startswith(b"%PDF")


def test_the_revision_comparison_says_incomplete_before_and_shows_figures_after(
    client: TestClient, session: Session, added: Scenario
) -> None:
    frozen = freeze_revision(session=session, study_id=added.study_id, frozen_by=TEST_AUTHOR,
                             values={"label": "Rev A", "signed_off_by": "Ilse Marrow-Quaye"})
    _give_both(client, session, added)
    page = client.get(f"/studies/{added.study_id}/revisions/compare",
                      params={"from": frozen.id, "to": "live"})
    assert page.status_code == 200, page.text
    assert "incomplete: no initiating event frequency and no severity yet" in page.text


def test_giving_frequency_and_severity_brings_the_figures(
    client: TestClient, session: Session, added: Scenario
) -> None:
    reply = _give_both(client, session, added)
    shown = figures(reply, added.id or 0)
    assert shown["mitigated"] == "1.0e-3 /yr"
    assert shown["gap"].endswith("+2.0 orders")
    assert text_of(reply, f"scenario-{added.id}-state") == ""  # the row's mark goes too
    overview = client.get(f"/studies/{added.study_id}").text
    assert 'data-total="incomplete"' not in overview
