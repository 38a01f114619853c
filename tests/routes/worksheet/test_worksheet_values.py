"""Live value edits: numbers as people say them, saved and recomputed; bad input never saved."""
# ruff: noqa: RUF001 - the multiplication sign is what the page shows

import pytest
from fastapi.testclient import TestClient
from httpx import Response
from sqlmodel import Session, select

from app.db.models import Step
from app.likelihood.types import StepKind
from tests.factories import make_scenario_tree, make_step
from tests.helpers import HX, attrs_of, figures, parse, text_of


def post_value(http: TestClient, step: Step, text: str, **extra: object) -> Response:
    """Send a value as htmx does while the scribe types."""
    return http.post(f"/studies/{step.study_id}/steps/{step.id}/value",
                     data={"value_text": text, **extra}, headers=HX)


def stored(session: Session, step: Step) -> tuple[float, str]:
    session.expire_all()
    row = session.get(Step, step.id)
    assert row is not None
    return row.value, row.value_text


@pytest.fixture
def layer(session: Session) -> Step:
    """An IPL at 1 in 10 on a scenario of 0.1 per year against 1e-5 per year."""
    scenario = make_scenario_tree(session)
    return make_step(session, scenario, value=0.1, value_text="1 in 10",
                     description="High level trip")


@pytest.fixture
def initiating(session: Session, layer: Step) -> Step:
    """The initiating event of the same scenario."""
    return session.exec(select(Step).where(Step.scenario_id == layer.scenario_id,
                                           Step.kind == StepKind.INITIATING_EVENT)).one()


@pytest.mark.parametrize(("text", "value", "said"), [
    ("0.01", 0.01, "1 in 100 · 1.0e-2"),
    ("1e-2", 0.01, "1 in 100 · 1.0e-2"),
    ("1/100", 0.01, "1 in 100 · 1.0e-2"),
    ("1 in 100", 0.01, "1 in 100 · 1.0e-2"),
    ("1%", 0.01, "1 in 100 · 1.0e-2"),
    ("10 %", 0.1, "1 in 10 · 1.0e-1"),
])
def test_a_probability_as_people_say_it_is_saved_and_said_back(
    client: TestClient, session: Session, layer: Step, text: str, value: float, said: str
) -> None:
    response = post_value(client, layer, text)
    assert response.status_code == 200
    assert text_of(response.text, f"step-{layer.id}-value_text-said") == said
    assert stored(session, layer) == (pytest.approx(value), text)


@pytest.mark.parametrize(("text", "per_year", "said"), [
    ("3 in 30 years", 0.1, "3 in 30 years · 1.0e-1 per year"),
    ("once in 50 years", 0.02, "once in 50 years · 2.0e-2 per year"),
    ("0.1/yr", 0.1, "0.1 per year · 1.0e-1 per year"),
    ("2 per year", 2.0, "2 per year · 2.0e0 per year"),
])
def test_an_initiating_frequency_as_people_say_it_is_saved_and_said_back(
    client: TestClient, session: Session, initiating: Step, text: str, per_year: float, said: str
) -> None:
    response = post_value(client, initiating, text)
    assert response.status_code == 200
    assert text_of(response.text, f"step-{initiating.id}-value_text-said") == said
    assert stored(session, initiating) == (pytest.approx(per_year), text)


def test_the_reply_is_the_recomputed_scenario_with_the_totals_out_of_band(
    client: TestClient, layer: Step
) -> None:
    response = post_value(client, layer, "1 in 1000")
    html = response.text
    region = f'<div class="scenario-results" id="scenario-{layer.scenario_id}-results"'
    assert html.lstrip().startswith(region)
    shown = figures(html, layer.scenario_id)
    assert shown["mitigated"] == "1.0e-4 /yr" and shown["gap"] == "× 1.0e1 · +1.0 orders"
    assert shown["sil"] == "Below SIL 1 (RRF ≤ 10)"
    for element_id in (f"step-{layer.id}-value_text-said", "node-totals", "study-totals"):
        assert attrs_of(html, element_id)["hx-swap-oob"] == "true"
    assert text_of(html, "node-totals").endswith(
        "Node short of target 1 Node short with flagged credits withdrawn 1")
    assert 'id="step-' + str(layer.id) + '-value_text"' not in html  # the box is never swapped


@pytest.mark.parametrize(("text", "message"), [
    ("banana", "High level trip: not a number: write 0.01, 1e-2, 1/100, 1 in 100 or 1% "
               "(got 'banana')."),
    ("2", "High level trip: a probability must be greater than 0 and at most 1 (got 2)."),
    ("150%", "High level trip: a probability must be greater than 0 and at most 1 (got 1.5)."),
    ("0", "High level trip: a probability must be greater than 0 and at most 1 (got 0)."),
    ("-0.1", "High level trip: a probability must be greater than 0 and at most 1 (got -0.1)."),
    ("1 in 0", "High level trip: the number after 'in' or '/' must not be 0."),
    ("", "High level trip: a value is required: write 0.01, 1e-2, 1/100, 1 in 100 or 1%."),
])
def test_bad_input_is_refused_with_the_rule_and_nothing_is_saved(
    client: TestClient, session: Session, layer: Step, text: str, message: str
) -> None:
    response = post_value(client, layer, text)
    assert response.status_code == 422
    said = f"step-{layer.id}-value_text-said"
    assert text_of(response.text, said) == message
    assert "data-error" in attrs_of(response.text, said)
    assert stored(session, layer) == (0.1, "1 in 10")
    shown = figures(response.text, layer.scenario_id)
    assert shown["mitigated"] == "1.0e-2 /yr"  # still built from the last valid value
    assert text_of(response.text, f"scenario-{layer.scenario_id}-results").startswith(
        "High level trip: using last valid value 1.0e-1")
    assert text_of(response.text, "node-totals").endswith(
        "Node short with flagged credits withdrawn 1 "
        "Totals High level trip: using last valid value 1.0e-1")


@pytest.mark.parametrize(("text", "rule_words"), [
    ("0", "a frequency must be a finite number of events per year above 0 (got 0)."),
    ("-3 per year", "a frequency must be a finite number of events per year above 0 (got -3)."),
    ("often", "not a number"),
])
def test_a_bad_initiating_frequency_is_refused(
    client: TestClient, session: Session, initiating: Step, text: str, rule_words: str
) -> None:
    before = stored(session, initiating)
    response = post_value(client, initiating, text)
    assert response.status_code == 422
    assert rule_words in text_of(response.text, f"step-{initiating.id}-value_text-said")
    assert stored(session, initiating) == before


def test_an_older_edit_arriving_after_a_newer_one_is_dropped(
    client: TestClient, session: Session, layer: Step
) -> None:
    newer = post_value(client, layer, "1 in 100", client="page-a", seq=5)
    assert newer.headers["X-Tallyroom-Seq"] == "5"
    older = post_value(client, layer, "1 in 10", client="page-a", seq=4)
    assert older.status_code == 204 and older.text == ""
    assert stored(session, layer) == (0.01, "1 in 100")
    other_page = post_value(client, layer, "1 in 20", client="page-b", seq=1)
    assert other_page.status_code == 200  # each page keeps its own count


def test_without_javascript_a_valid_value_redirects_back_to_the_scenario(
    client: TestClient, session: Session, layer: Step
) -> None:
    response = client.post(f"/studies/{layer.study_id}/steps/{layer.id}/value",
                           data={"value_text": "1 in 50"}, follow_redirects=False)
    assert response.status_code == 303
    assert response.headers["location"].endswith(f"#scenario-{layer.scenario_id}")
    assert stored(session, layer) == (0.02, "1 in 50")


def test_without_javascript_bad_input_shows_the_page_with_the_typed_text_kept(
    client: TestClient, session: Session, layer: Step
) -> None:
    response = client.post(f"/studies/{layer.study_id}/steps/{layer.id}/value",
                           data={"value_text": "lots"})
    assert response.status_code == 422
    box = attrs_of(response.text, f"step-{layer.id}-value_text")
    assert box["value"] == "lots" and box["aria-invalid"] == "true"
    assert "not a number" in text_of(response.text, "worksheet-notice")
    assert stored(session, layer) == (0.1, "1 in 10")


def test_an_unknown_step_or_a_step_of_another_study_is_a_404(
    client: TestClient, session: Session, layer: Step
) -> None:
    other = make_scenario_tree(session, title="Other study (invented)")
    assert client.post(f"/studies/{other.study_id}/steps/{layer.id}/value",
                       data={"value_text": "0.1"}, headers=HX).status_code == 404
    assert client.post(f"/studies/{layer.study_id}/steps/9999/value",
                       data={"value_text": "0.1"}, headers=HX).status_code == 404
    assert parse("<p id='x'>y</p>").found["x"]["tag"] == "p"
