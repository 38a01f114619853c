"""The room view: the scenario in focus, a change poll, and colours readable across a room."""
# ruff: noqa: RUF001 - the multiplication sign is what the page shows

import re

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import ChangeLogEntry, Deviation, Scenario, Step, Study
from app.settings import PROJECT_ROOT
from tests.factories import (
    make_deviation,
    make_node,
    make_scenario,
    make_scenario_tree,
    make_step,
    make_study,
)
from tests.helpers import HX, attrs_of, text_of

WCAG_SOURCE = "WCAG 2.1, success criterion 1.4.3 and the definition of relative luminance"


@pytest.fixture
def two_scenarios(session: Session) -> tuple[Scenario, Scenario]:
    """Two scenarios of one deviation: 0.1/yr and 1/yr against 1e-5/yr."""
    first = make_scenario_tree(session)
    deviation = session.get(Deviation, first.deviation_id)
    assert deviation is not None
    second = make_scenario(session, deviation, initiating_frequency=1.0, cause="Pump runs dry")
    return first, second


def test_the_room_shows_the_first_scenario_until_the_scribe_picks_one(
    client: TestClient, two_scenarios: tuple[Scenario, Scenario]
) -> None:
    first, second = two_scenarios
    page = client.get(f"/studies/{first.study_id}/room").text
    assert attrs_of(page, "room-scenario")["data-scenario"] == str(first.id)
    assert "decision support for a competent review team" in page  # the full cautions
    response = client.post(f"/studies/{first.study_id}/focus", data={"scenario_id": second.id})
    assert response.status_code == 204
    page = client.get(f"/studies/{first.study_id}/room").text
    assert attrs_of(page, "room-scenario")["data-scenario"] == str(second.id)
    assert text_of(page, "room-scenario").startswith("Pump runs dry")


def test_the_focus_is_not_part_of_the_record(
    client: TestClient, session: Session, two_scenarios: tuple[Scenario, Scenario]
) -> None:
    first, second = two_scenarios
    logged = len(session.exec(select(ChangeLogEntry)).all())
    client.post(f"/studies/{first.study_id}/focus", data={"scenario_id": second.id})
    session.expire_all()
    assert len(session.exec(select(ChangeLogEntry)).all()) == logged
    study = session.get(Study, first.study_id)
    assert study is not None and study.focus_scenario_id == second.id and study.version == 1


def test_focus_on_a_scenario_of_another_study_is_a_404(
    client: TestClient, session: Session, two_scenarios: tuple[Scenario, Scenario]
) -> None:
    other = make_scenario_tree(session, title="Other (invented)")
    response = client.post(f"/studies/{two_scenarios[0].study_id}/focus",
                           data={"scenario_id": other.id})
    assert response.status_code == 404
    missing = client.post(f"/studies/{two_scenarios[0].study_id}/focus", data={})
    assert missing.status_code == 422


def test_the_poll_answers_204_until_something_changes(
    client: TestClient, session: Session, two_scenarios: tuple[Scenario, Scenario]
) -> None:
    first, second = two_scenarios
    page = client.get(f"/studies/{first.study_id}/room").text
    stamp = attrs_of(page, "room-live")["data-stamp"]
    live = f"/studies/{first.study_id}/room/live?stamp={stamp}"
    assert attrs_of(page, "room-live")["hx-get"] == live
    assert attrs_of(page, "room-live")["hx-trigger"] == "every 500ms"
    assert client.get(live, headers=HX).status_code == 204
    layer = make_step(session, first, value=0.01)
    changed = client.get(live, headers=HX)
    assert changed.status_code == 200
    assert changed.text.lstrip().startswith('<div id="room-live"')
    assert text_of(changed.text, "room-mitigated") == "1.0e-3 /yr"
    assert text_of(changed.text, "room-gap") == "+2.0 orders · ×1.0e2"
    new_stamp = attrs_of(changed.text, "room-live")["data-stamp"]
    assert new_stamp != stamp
    assert client.get(f"/studies/{first.study_id}/room/live?stamp={new_stamp}").status_code == 204
    session.delete(session.get(Step, layer.id))
    session.commit()
    assert client.get(f"/studies/{first.study_id}/room/live?stamp={new_stamp}").status_code == 200
    client.post(f"/studies/{first.study_id}/focus", data={"scenario_id": second.id})
    assert client.get(f"/studies/{first.study_id}/room/live?stamp={new_stamp}").status_code == 200


def test_an_empty_study_has_a_room_that_says_so(client: TestClient, session: Session) -> None:
    study = make_study(session)
    make_deviation(session, make_node(session, study))
    page = client.get(f"/studies/{study.id}/room").text
    assert text_of(page, "room-live").startswith("No scenario to show yet.")
    assert client.get("/studies/999/room").status_code == 404
    assert client.get("/studies/999/room/live").status_code == 404


# --- contrast ----------------------------------------------------------------------------

def relative_luminance(hex_colour: str) -> float:
    """WCAG 2.1 relative luminance of an sRGB colour."""
    channels = [int(hex_colour.lstrip("#")[i:i + 2], 16) / 255 for i in (0, 2, 4)]
    linear = [c / 12.92 if c <= 0.03928 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
    return 0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2]


def contrast(foreground: str, background: str) -> float:
    """WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05), lighter over darker."""
    high, low = sorted((relative_luminance(foreground), relative_luminance(background)),
                       reverse=True)
    return (high + 0.05) / (low + 0.05)


def room_colours() -> dict[str, str]:
    """The room view's colour variables, read from its own stylesheet."""
    css = (PROJECT_ROOT / "static" / "room.css").read_text()
    block = css[css.index("body.room {"):]
    block = block[:block.index("}")]
    return dict(re.findall(r"--room-([a-z]+):\s*(#[0-9a-fA-F]{6})", block))


@pytest.mark.parametrize(("foreground", "background", "ratio"), [
    ("#000000", "#ffffff", 21.0),  # WCAG 2.1: the largest possible ratio
    ("#ffffff", "#ffffff", 1.0),
    ("#767676", "#ffffff", 4.54),  # lightest grey passing AA on white (common practice, no source)
])
def test_the_contrast_formula_gives_known_ratios(foreground: str, background: str,
                                                 ratio: float) -> None:
    assert contrast(foreground, background) == pytest.approx(ratio, abs=0.01)


@pytest.mark.parametrize(("text", "background"), [
    ("ink", "bg"), ("muted", "bg"), ("accent", "bg"), ("meets", "bg"), ("short", "bg"),
    ("ink", "panel"), ("muted", "panel"), ("accent", "panel"),
])
def test_room_text_colours_pass_wcag_aa(text: str, background: str) -> None:
    colours = room_colours()
    ratio = contrast(colours[text], colours[background])
    assert ratio >= 4.5, f"{text} on {background}: {ratio:.2f}:1 < 4.5:1 ({WCAG_SOURCE})"


def test_ladder_text_colours_pass_wcag_aa_on_its_white_card() -> None:
    ladder = (PROJECT_ROOT / "templates" / "worksheet" / "_ladder.html").read_text()
    text_fills = set(re.findall(r'<text[^>]*fill="(#[0-9a-fA-F]{6})"', ladder))
    result_colours = set(re.findall(r"_colour = '(#[0-9a-fA-F]{6})'", ladder))
    assert len(text_fills) >= 3 and len(result_colours) == 2
    for colour in text_fills | result_colours:
        assert contrast(colour, "#ffffff") >= 4.5, f"{colour} on white ({WCAG_SOURCE})"
