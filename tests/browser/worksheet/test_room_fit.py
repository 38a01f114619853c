"""In real browsers: the room view fits a projector's screen without scrolling.

At 1024x768, 1280x720, 1366x768 and 1920x1080 (common projector and meeting-room display
resolutions; common practice, no source) the page is no taller than the window, and nothing
covers a figure, a step row or the one-line caution: the element under each one's centre
(document.elementFromPoint) is that element or inside it. Three cases: the demo scenario with
the longest cause and consequence, a scenario with many steps, and a revealed estimate round
shown above the scenario. Screenshots of each go to test-artifacts/.
"""

from pathlib import Path

import pytest
from playwright.sync_api import Browser, Page, expect
from sqlmodel import Session

from app.db.models import Scenario, Study
from app.likelihood.estimates import EstimateUnit
from app.likelihood.types import StepKind
from app.services.estimates.answers import Answerer, give_estimate
from app.services.estimates.rounds import open_round, open_word_rounds, reveal_round
from app.services.estimates.word_list import save_word_list
from app.services.study.tree import ScenarioBranch, load_study_tree
from app.services.worksheet.room import set_focus
from tests.factories import make_scenario_tree, make_step

SIZES = [(1024, 768), (1280, 720), (1366, 768), (1920, 1080)]
# What must be in plain view: each figure, each step row, the caution line and the ladder.
SHOWN = ("[data-figure], #room-steps tbody tr:not([hidden]), #room-title-cause, "
         "#room-title-consequence, footer.cautions, .room-ladder, #room-round .spread-axis, "
         "#room-pager:not([hidden]), #room-words tbody tr")
COVERED_JS = """(selector) => {
  const problems = [];
  for (const element of document.querySelectorAll(selector)) {
    const box = element.getBoundingClientRect();
    const name = element.id || element.dataset.figure || element.getAttribute("class")
      || element.tagName;
    if (box.width === 0 || box.height === 0) { problems.push(name + ': not shown'); continue; }
    if (box.top < 0 || box.left < 0 || box.bottom > innerHeight + 0.5
        || box.right > innerWidth + 0.5) {
      problems.push(name + ': outside the window ' + JSON.stringify(box)); continue; }
    const x = box.left + box.width / 2, y = box.top + box.height / 2;
    const found = document.elementFromPoint(x, y);
    if (!found || !(element === found || element.contains(found)))
      problems.push(name + ': covered by ' + (found ? found.outerHTML.slice(0, 80) : 'nothing'));
  }
  return problems;
}"""
SIZE_JS = """() => ({doc: document.documentElement.scrollHeight, win: innerHeight,
  docw: document.documentElement.scrollWidth, winw: innerWidth})"""
# Chromium's reading of a -webkit-line-clamp: the box is cut to its set number of lines.
LINES_JS = """(id) => { const e = document.getElementById(id); const s = getComputedStyle(e);
  return Math.round(e.getBoundingClientRect().height / parseFloat(s.lineHeight)); }"""
CUT_JS = "(id) => { const e = document.getElementById(id); return e.scrollWidth > e.clientWidth; }"

LONG_CAUSE = ("Level transmitter on the day tank fails low after a power dip and reads a falsely "
              "low level while the board operator is handling an unrelated alarm flood, so the "
              "transfer pump keeps running well past the normal stop point")


def _longest_demo_branch(session: Session, study: Study) -> ScenarioBranch:
    """The demo scenario whose cause and consequence together are the longest."""
    tree = load_study_tree(session, study.id or 0)
    return max(tree.scenario_branches(),
               key=lambda b: len(b.scenario.cause or "") + len(b.scenario.consequence or ""))


def _many_steps(session: Session) -> Scenario:
    """A scenario with fourteen steps and long descriptions, every kind present."""
    scenario = make_scenario_tree(session, title="Many steps (invented)")
    scenario.cause, scenario.consequence = LONG_CAUSE, LONG_CAUSE.replace("fails low", "spills")
    session.add(scenario)
    kinds = [StepKind.ENABLING_CONDITION, StepKind.CONDITIONAL_MODIFIER] * 3 + [StepKind.IPL] * 7
    for position, kind in enumerate(kinds, start=1):
        make_step(session, scenario, kind=kind, value=0.5, position=position,
                  description=f"Layer {position}: " + "an independent safeguard that acts " * 3)
    session.commit()
    return scenario


def _revealed_round(session: Session, demo: Study) -> Scenario:
    """The longest demo scenario with a revealed round on its last step (three estimates)."""
    branch = _longest_demo_branch(session, demo)
    last = max(branch.steps, key=lambda step: step.position)
    found = open_round(session=session, study_id=demo.id or 0, step_id=last.id or 0,
                       question="What is the probability that this layer fails when needed?")
    for person, said in (("A. Lind", "1 in 1000"), ("B. Osei", "0.7%"), ("C. Ruiz", "5e-5")):
        give_estimate(session=session, study_id=demo.id or 0, round_id=found.id or 0,
                      answerer=Answerer(person, None), text=said)
    reveal_round(session=session, study_id=demo.id or 0, round_id=found.id or 0)
    return branch.scenario


def _check_fits(browser: Browser, url: str, scenario: Scenario, artifacts: Path,
                name: str) -> None:
    problems: list[str] = []
    for width, height in SIZES:
        context = browser.new_context(viewport={"width": width, "height": height})
        page = context.new_page()
        page.goto(url)
        expect(page.locator("#room-scenario")).to_have_attribute("data-scenario",
                                                                 str(scenario.id))
        expect(page.locator("body")).to_have_attribute("data-room-fitted", "yes")
        page.screenshot(path=str(artifacts / f"room-{name}-{width}x{height}.png"))
        size = page.evaluate(SIZE_JS)
        if size["doc"] > size["win"] or size["docw"] > size["winw"]:
            problems.append(f"{width}x{height}: page {size['docw']}x{size['doc']}")
        problems += [f"{width}x{height}: {p}" for p in page.evaluate(COVERED_JS, SHOWN)]
        _check_clamps(page, problems, f"{width}x{height}")
        problems += _check_pages(page, f"{width}x{height}")
        context.close()
    assert problems == [], "\n".join(problems)


def _check_pages(page: Page, size: str) -> list[str]:
    """Every step is shown on one page or another, each page in plain view."""
    steps = page.locator("#room-steps tbody tr")
    every = {steps.nth(i).locator("[data-step-value]").get_attribute("data-step-value")
             for i in range(steps.count())}
    pager = page.locator("#room-pager")
    shown: set[str | None] = set()
    problems: list[str] = []
    for _turn in range(len(every)):
        visible = page.locator("#room-steps tbody tr:not([hidden]) [data-step-value]")
        shown |= {visible.nth(i).get_attribute("data-step-value")
                  for i in range(visible.count())}
        if shown == every or not pager.is_visible():
            break
        pager.click(timeout=3000)
        problems += [f"{size} turned: {p}" for p in page.evaluate(COVERED_JS, SHOWN)]
    return problems + ([f"{size}: steps never shown {every - shown}"] if shown != every else [])


def _check_clamps(page: Page, problems: list[str], size: str) -> None:
    """Cause and consequence take at most two lines each; the caution one."""
    for element_id, most in (("room-title-cause", 2), ("room-title-consequence", 2),
                             ("room-caution", 1)):
        if (lines := page.evaluate(LINES_JS, element_id)) > most:
            problems.append(f"{size}: {element_id} takes {lines} lines")
    if page.evaluate(CUT_JS, "room-caution"):
        problems.append(f"{size}: the caution line is cut short")


def test_the_longest_demo_scenario_fits_each_projector_size(
    browser: Browser, live_server: str, demo_study: Study, session: Session, artifacts: Path
) -> None:
    scenario = _longest_demo_branch(session, demo_study).scenario
    set_focus(session=session, study_id=demo_study.id or 0, scenario_id=scenario.id or 0)
    _check_fits(browser, f"{live_server}/studies/{demo_study.id}/room", scenario, artifacts,
                "longest")


def test_a_scenario_with_many_steps_fits_each_projector_size(
    browser: Browser, live_server: str, session: Session, artifacts: Path
) -> None:
    scenario = _many_steps(session)
    _check_fits(browser, f"{live_server}/studies/{scenario.study_id}/room", scenario, artifacts,
                "many-steps")


def test_a_revealed_estimate_round_and_its_scenario_fit_each_projector_size(
    browser: Browser, live_server: str, demo_study: Study, session: Session, artifacts: Path
) -> None:
    scenario = _revealed_round(session, demo_study)
    set_focus(session=session, study_id=demo_study.id or 0, scenario_id=scenario.id or 0)
    _check_fits(browser, f"{live_server}/studies/{demo_study.id}/room", scenario, artifacts,
                "round")


def test_open_word_rounds_and_the_scenario_fit_each_projector_size(
    browser: Browser, live_server: str, demo_study: Study, session: Session, artifacts: Path
) -> None:
    study_id = demo_study.id or 0
    for unit, words in ((EstimateUnit.PROBABILITY, "rare\nunlikely\npossible\nlikely"),
                        (EstimateUnit.PER_YEAR, "remote\noccasional\nfrequent")):
        save_word_list(session=session, study_id=study_id, unit=unit, text=words)
    assert open_word_rounds(session=session, study_id=study_id) == 7
    scenario = _longest_demo_branch(session, demo_study).scenario
    set_focus(session=session, study_id=study_id, scenario_id=scenario.id or 0)
    _check_fits(browser, f"{live_server}/studies/{study_id}/room", scenario, artifacts, "words")


@pytest.mark.parametrize("action", ["hover", "focus"])
def test_the_full_cause_shows_on_hover_and_focus(
    page: Page, live_server: str, session: Session, action: str
) -> None:
    scenario = _many_steps(session)
    page.set_viewport_size({"width": 1024, "height": 768})
    page.goto(f"{live_server}/studies/{scenario.study_id}/room")
    cause = page.locator("#room-title-cause")
    assert page.evaluate(LINES_JS, "room-title-cause") == 2
    expect(cause).to_have_attribute("title", LONG_CAUSE)
    getattr(cause, action)()
    assert page.evaluate(LINES_JS, "room-title-cause") > 2
