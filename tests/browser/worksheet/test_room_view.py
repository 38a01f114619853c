"""In real browsers: the room view follows the scribe within a second; large type; screenshots."""

import os
import shutil
import time
from pathlib import Path

from playwright.sync_api import Browser, Page, expect
from sqlmodel import Session

from app.db.models import Deviation, Scenario, Study
from app.services.study.tree import load_study_tree
from app.settings import PROJECT_ROOT
from tests.browser.conftest import SCREEN
from tests.factories import make_scenario, make_scenario_tree, make_step

README_SHOTS = PROJECT_ROOT / "static" / "screenshots"
SMALLEST_TEXT_JS = """() => {
  let smallest = 1000;
  for (const element of document.querySelectorAll('body *:not(svg):not(svg *)')) {
    const own = Array.from(element.childNodes).some(n => n.nodeType === 3 && n.textContent.trim());
    if (!own || element.closest('svg') || element.closest('#room-caution')
        || !element.offsetParent) continue;
    smallest = Math.min(smallest, parseFloat(getComputedStyle(element).fontSize));
  }
  return smallest;
}"""


def node_url(live_server: str, session: Session, scenario: Scenario) -> str:
    """The worksheet of the scenario's node."""
    deviation = session.get(Deviation, scenario.deviation_id)
    assert deviation is not None
    return f"{live_server}/studies/{scenario.study_id}/nodes/{deviation.node_id}"


def test_the_scribes_edit_appears_in_the_room_view_within_a_second(
    page: Page, browser: Browser, live_server: str, session: Session
) -> None:
    first = make_scenario_tree(session)
    deviation = session.get(Deviation, first.deviation_id)
    assert deviation is not None
    second = make_scenario(session, deviation, cause="Pump runs dry")
    layer = make_step(session, second, value=0.1, value_text="1 in 10", description="Trip")
    room_context = browser.new_context(viewport=SCREEN)
    room = room_context.new_page()
    room.goto(f"{live_server}/studies/{first.study_id}/room")
    expect(room.locator("#room-scenario")).to_have_attribute("data-scenario", str(first.id))
    page.goto(node_url(live_server, session, first))
    value = page.locator(f"#step-{layer.id}-value_text")
    value.click()  # the scribe moves to the second scenario: the room follows
    expect(room.locator("#room-scenario")).to_have_attribute(
        "data-scenario", str(second.id), timeout=1500)
    expect(room.locator("#room-mitigated")).to_have_text("1.0e-2 /yr")
    value.press("Control+a")
    value.press_sequentially("1 in 1000", delay=20)
    expect(page.locator(f"#scenario-{second.id}-results [data-figure='mitigated']")
           ).to_have_text("1.0e-4 /yr")
    started = time.monotonic()
    expect(room.locator("#room-mitigated")).to_have_text("1.0e-4 /yr", timeout=1000)
    assert time.monotonic() - started < 1.0
    expect(room.locator(f"[data-step-value='{layer.id}']")).to_have_text("1 in 1,000 · 1.0e-3")
    room_context.close()


def _showcase(session: Session, study: Study) -> Scenario:
    """The demo scenario with the most credited steps among those short of target."""
    tree = load_study_tree(session, study.id or 0)
    short = [s for s in tree.scenario_branches()
             if s.outcome.result is not None and not s.outcome.result.meets_target]
    chosen = max(short or tree.scenario_branches(), key=lambda s: len(s.outcome.result.ladder)
                 if s.outcome.result else 0)
    return chosen.scenario


def _save_shot(page: Page, artifacts: Path, name: str) -> None:
    """Write the screenshot as a test artifact (and, when asked, a small copy for the README)."""
    target = artifacts / name
    page.screenshot(path=str(target))
    # The README's copies are tracked files: refresh them only when asked, never in CI.
    if os.environ.get("TALLYROOM_UPDATE_SCREENSHOTS") != "1":
        return
    README_SHOTS.mkdir(parents=True, exist_ok=True)
    try:
        from PIL import Image
    except ImportError:  # no Pillow: keep the full-colour copy
        shutil.copyfile(target, README_SHOTS / name)
        return
    with Image.open(target) as image:
        image.convert("RGB").quantize(colors=128).save(README_SHOTS / name, optimize=True)


def test_room_view_is_large_high_contrast_and_photographed(
    page: Page, live_server: str, demo_study: Study, session: Session, artifacts: Path
) -> None:
    scenario = _showcase(session, demo_study)
    page.goto(node_url(live_server, session, scenario))
    expect(page.locator(f"#scenario-{scenario.id}")).to_be_visible()
    page.locator(f"#sc-{scenario.id}-cause").focus()  # the room shows what the scribe is on
    page.evaluate(f"document.getElementById('deviation-{scenario.deviation_id}').scrollIntoView()")
    _save_shot(page, artifacts, "worksheet.png")
    page.goto(f"{live_server}/studies/{demo_study.id}/room")
    expect(page.locator("#room-scenario")).to_have_attribute("data-scenario", str(scenario.id))
    assert page.viewport_size == SCREEN
    body_px = float(page.evaluate("parseFloat(getComputedStyle(document.body).fontSize)"))
    assert body_px >= 24
    assert page.evaluate(SMALLEST_TEXT_JS) >= 24  # every text outside the ladder and caution
    # The caution is one line as wide as the window allows (test_room_fit.py): 1.1 % of it.
    caution = page.locator("#room-caution")
    assert float(caution.evaluate("e => parseFloat(getComputedStyle(e).fontSize)")) >= 21
    expect(caution).to_contain_text("Decision support for a competent team")
    expect(caution).to_contain_text("decision support for a competent review team")  # in full
    page.screenshot(path=str(artifacts / "room-1920x1080.png"))
    # The README shows a common projector's 1366x768 (test_room_fit.py checks all four sizes).
    page.set_viewport_size({"width": 1366, "height": 768})
    page.reload()
    expect(page.locator("body")).to_have_attribute("data-room-fitted", "yes")
    _save_shot(page, artifacts, "room.png")
