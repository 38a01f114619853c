"""The actions page, read as the review team sees it."""

import math
from collections.abc import Iterator
from datetime import date

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import ActionStatus, Recommendation, RecommendationScenario, Scenario
from app.routes.record.actions import today
from app.services.record.actions import add_action
from tests.factories import make_scenario_tree, make_step
from tests.helpers import HX, table_rows

FIXED_TODAY = date(2026, 12, 1)


@pytest.fixture
def fixed_day(client: TestClient) -> Iterator[date]:
    """The app's 'today' pinned to 1 December 2026."""
    client.app.dependency_overrides[today] = lambda: FIXED_TODAY  # type: ignore[attr-defined]
    yield FIXED_TODAY
    client.app.dependency_overrides.clear()  # type: ignore[attr-defined]


def _scenario_short_by_two_orders(session: Session) -> Scenario:
    scenario = make_scenario_tree(session)  # IE 0.1/yr against a target of 1e-5/yr
    make_step(session, scenario, value=0.01, description="Relief valve")  # 1e-3/yr: gap +2.0
    return scenario


def _rows(html: str) -> list[dict[str, str]]:
    header, *body = table_rows(html, "actions-table")
    return [dict(zip(header, row, strict=True)) for row in body]


def test_actions_are_listed_by_due_date_with_overdue_ones_labelled(
    client: TestClient, session: Session, fixed_day: date
) -> None:
    study_id = make_scenario_tree(session).study_id
    add_action(session=session, study_id=study_id, text="Undated check")
    add_action(session=session, study_id=study_id, text="Late trip", due_date="2026-11-30",
                  owner="D. Achterberg")
    add_action(session=session, study_id=study_id, text="Future gauge", due_date="2027-01-15")
    rows = _rows(client.get(f"/studies/{study_id}/actions").text)
    assert [(r["Due"], r["Action"], r["Owner"], r["Status"]) for r in rows] == [
        ("2026-11-30 ⚠ Overdue", "Late trip", "D. Achterberg", "Open"),
        ("2027-01-15", "Future gauge", "—", "Open"),
        ("no date", "Undated check", "—", "Open"),
    ]


def test_the_expected_rrf_is_judged_against_each_addressed_scenarios_gap(
    client: TestClient, session: Session, fixed_day: date
) -> None:
    scenario = _scenario_short_by_two_orders(session)
    add_action(session=session, study_id=scenario.study_id, text="Add a SIL 2 trip",
                  expected_rrf=300, scenario_ids=[scenario.id])
    add_action(session=session, study_id=scenario.study_id, text="Add a BPCS alarm",
                  expected_rrf=10, scenario_ids=[scenario.id])
    rows = _rows(client.get(f"/studies/{scenario.study_id}/actions").text)
    by_text = {r["Action"]: r for r in rows}
    # log10(300) = 2.477 >= 2.0; log10(10) = 1.0 leaves 2.0 - 1.0 = +1.0 orders.
    assert by_text["Add a SIL 2 trip"]["Expected RRF"] == "300 (2.5 orders)"
    assert "gap +2.0 · ● would close the gap" in by_text["Add a SIL 2 trip"][
        "Scenarios addressed · current gap"]
    assert "▲ would not close the gap: +1.0 orders remain" in by_text["Add a BPCS alarm"][
        "Scenarios addressed · current gap"]


def test_an_action_is_added_from_the_form(client: TestClient, session: Session) -> None:
    study_id = make_scenario_tree(session).study_id
    response = client.post(f"/studies/{study_id}/actions", follow_redirects=False,
                           data={"text": "Fit a check valve", "owner": "A. Okafor",
                                 "due_date": "2027-02-01", "expected_rrf": "10"})
    assert response.status_code == 303
    saved = session.exec(select(Recommendation)).one()
    assert (saved.text, saved.owner, saved.due_date, saved.expected_rrf) == (
        "Fit a check valve", "A. Okafor", date(2027, 2, 1), 10.0)


@pytest.mark.parametrize(
    ("field", "typed", "message"),
    [
        ("text", "", "the recommendation text is required."),
        ("due_date", "next week", "the due date must be a date written YYYY-MM-DD"),
        ("expected_rrf", "0", "the expected risk reduction must be a number above 0"),
        ("expected_rrf", "ten", "must be a number such as 100 (got &#39;ten&#39;)"),
    ],
)
def test_a_bad_new_action_is_refused_at_its_field_with_the_typed_text_kept(
    client: TestClient, session: Session, field: str, typed: str, message: str
) -> None:
    study_id = make_scenario_tree(session).study_id
    data = {"text": "Fit a check valve", "owner": "Kept Owner", field: typed}
    response = client.post(f"/studies/{study_id}/actions", data=data, headers=HX)
    assert response.status_code == 422
    field_id = {"text": "text", "due_date": "due", "expected_rrf": "rrf"}[field]
    assert f'id="new-action-{field_id}-error"' in response.text
    assert message in response.text
    assert 'value="Kept Owner"' in response.text
    assert session.exec(select(Recommendation)).all() == []


def test_rejecting_without_a_reason_is_refused_and_with_one_is_saved(
    client: TestClient, session: Session
) -> None:
    study_id = make_scenario_tree(session).study_id
    action = add_action(session=session, study_id=study_id, text="Add a trip")
    form = {"text": "Add a trip", "status": "rejected", "status_reason": ""}
    refused = client.post(f"/studies/{study_id}/actions/{action.id}", data=form, headers=HX)
    assert refused.status_code == 422
    assert 'id="edit-action-reason-error"' in refused.text
    assert "a rejected action needs a reason" in refused.text
    form["status_reason"] = "Relief valve already covers it"
    saved = client.post(f"/studies/{study_id}/actions/{action.id}", data=form, headers=HX)
    assert saved.status_code == 200
    session.refresh(action)
    assert (action.status, action.status_reason) == (ActionStatus.REJECTED,
                                                     "Relief valve already covers it")
    assert _rows(saved.text)[0]["Status"] == "Rejected: Relief valve already covers it"


def test_an_unknown_status_is_refused(client: TestClient, session: Session) -> None:
    study_id = make_scenario_tree(session).study_id
    action = add_action(session=session, study_id=study_id, text="Add a trip")
    response = client.post(f"/studies/{study_id}/actions/{action.id}", headers=HX,
                           data={"text": "Add a trip", "status": "parked"})
    assert response.status_code == 422
    assert "the status must be one of open, in_progress, done, rejected" in response.text


def test_the_edit_form_opens_in_place_and_escape_returns_the_list(
    client: TestClient, session: Session
) -> None:
    study_id = make_scenario_tree(session).study_id
    action = add_action(session=session, study_id=study_id, text="Add a trip")
    fragment = client.get(f"/studies/{study_id}/actions/{action.id}/edit", headers=HX).text
    assert fragment.lstrip().startswith('<section class="panel record" id="actions-section"')
    assert 'id="edit-action-text"' in fragment and "autofocus" in fragment
    assert 'hx-trigger="tallyroom-escape"' in fragment  # static/app.js fires it on Escape
    assert "<html" not in fragment
    full = client.get(f"/studies/{study_id}/actions/{action.id}/edit").text
    assert "<html" in full and 'id="edit-action-text"' in full


def test_delete_asks_first_then_deletes(client: TestClient, session: Session) -> None:
    study_id = make_scenario_tree(session).study_id
    action = add_action(session=session, study_id=study_id, text="Add a trip")
    page = client.get(f"/studies/{study_id}/actions").text
    assert 'hx-confirm="Delete the action &quot;Add a trip&quot;?"' in page
    confirm = client.get(f"/studies/{study_id}/actions/{action.id}/delete")
    assert "Delete this action?" in confirm.text
    assert session.get(Recommendation, action.id) is not None
    action_id = action.id
    client.post(f"/studies/{study_id}/actions/{action_id}/delete")
    session.expire_all()
    assert session.get(Recommendation, action_id) is None


def test_scenarios_are_linked_and_unlinked_from_the_row(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    action = add_action(session=session, study_id=scenario.study_id, text="Add a trip")
    base = f"/studies/{scenario.study_id}/actions/{action.id}/scenarios"
    client.post(base, data={"scenario_id": str(scenario.id)})
    assert session.exec(select(RecommendationScenario)).all() == [
        RecommendationScenario(recommendation_id=action.id, scenario_id=scenario.id)]
    client.post(f"{base}/{scenario.id}/delete")
    assert session.exec(select(RecommendationScenario)).all() == []


@pytest.mark.parametrize(("typed", "message"),
                         [("", "choose a scenario to link."), ("99999", "is not in this study")])
def test_linking_nothing_or_a_foreign_scenario_is_refused(
    client: TestClient, session: Session, typed: str, message: str
) -> None:
    scenario = make_scenario_tree(session)
    action = add_action(session=session, study_id=scenario.study_id, text="Add a trip")
    response = client.post(f"/studies/{scenario.study_id}/actions/{action.id}/scenarios",
                           data={"scenario_id": typed}, headers=HX)
    assert response.status_code == 422
    assert f'id="link-{action.id}-error"' in response.text and message in response.text


def test_an_action_of_another_study_is_a_404(client: TestClient, session: Session) -> None:
    first = make_scenario_tree(session).study_id
    other = make_scenario_tree(session).study_id
    action = add_action(session=session, study_id=other, text="Elsewhere")
    assert client.get(f"/studies/{first}/actions/{action.id}/edit").status_code == 404
    assert client.post(f"/studies/{first}/actions/{action.id}/delete").status_code == 404


def test_the_expected_rrf_is_also_judged_on_the_distribution(
    client: TestClient, session: Session, fixed_day: date
) -> None:
    """IE 0.1 /yr exact, relief valve PFD 0.01 with EF 10: median 1e-3 /yr against 1e-5 /yr.

    scipy.stats.lognorm(s = ln 10 / z95, scale = median).cdf(1e-5): before, median 1e-3;
    after an RRF of 300, median 1e-3 / 300 = 3.3e-6.
    """
    from scipy import stats

    from app.likelihood.numbers import probability_text

    scenario = make_scenario_tree(session)
    make_step(session, scenario, value=0.01, description="Relief valve", error_factor=10.0)
    add_action(session=session, study_id=scenario.study_id, text="Add a SIL 2 trip",
               expected_rrf=300, scenario_ids=[scenario.id])
    sigma = math.log(10) / stats.norm.ppf(0.95)
    before = probability_text(stats.lognorm(s=sigma, scale=1e-3).cdf(1e-5))
    after = probability_text(stats.lognorm(s=sigma, scale=1e-3 / 300).cdf(1e-5))
    assert (before, after) == ("< 1 %", "78 %")  # by hand: z = ln 3 / 1.400 = 0.785
    rows = _rows(client.get(f"/studies/{scenario.study_id}/actions").text)
    assert f"P(meets target) {before} → {after} with this action" in rows[0][
        "Scenarios addressed · current gap"]
