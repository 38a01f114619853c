"""The worksheet by keyboard and screen reader: every control on the Tab route, a skip link to
the first value, one accessible name per field that says where it is and does not change while
typing, and one polite live region that speaks once typing pauses (never an alert mid-typing).

Names are Chromium's own computed accessible names (DevTools Accessibility.getFullAXTree), the
same a screen reader gets. Sources: WCAG 2.1 2.1.1 keyboard, 2.4.1 bypass blocks, 2.4.6
headings and labels, 4.1.2 name, role, value, 4.1.3 status messages (W3C Recommendation, 2018).
"""

from collections import Counter
from typing import Any

import pytest
from playwright.sync_api import Browser, Page, expect
from sqlmodel import Session, select

from app.db.models import Deviation, Node, Step, Study
from app.likelihood.types import StepKind
from tests.browser.accessibility import axe_violations
from tests.factories import make_safeguard, make_scenario_tree, make_step

# Mark every visible control of the page's main content, so each Tab can say which it reached.
_MARK_CONTROLS = """() => {
  const all = Array.from(document.querySelectorAll(
    'main a[href], main button, main input:not([type=hidden]), main select, main textarea'));
  const shown = all.filter(el => {
    const box = el.getBoundingClientRect();
    // the visually hidden submit buttons are the no-JavaScript Enter route, not a control
    return box.width > 1 && box.height > 1 && !el.closest('.visually-hidden') &&
      getComputedStyle(el).visibility !== 'hidden';
  });
  shown.forEach((el, i) => { el.dataset.probe = String(i); });
  return shown.map(el => ({probe: String(el.dataset.probe), tag: el.tagName.toLowerCase(),
    kind: el.className || el.getAttribute('type') || el.getAttribute('name') || '',
    text: (el.getAttribute('aria-label') || el.textContent || el.id).trim().slice(0, 60)}));
}"""


@pytest.fixture
def node_page(page: Page, live_server: str, session: Session) -> dict[str, Any]:
    """A node with a scenario holding every step kind, a safeguard, and a second scenario."""
    scenario = make_scenario_tree(session)
    kinds = [(StepKind.ENABLING_CONDITION, 0.5, "1 in 2", "Tank filling"),
             (StepKind.CONDITIONAL_MODIFIER, 0.5, "1 in 2", "Operator in the area"),
             (StepKind.IPL, 0.1, "1 in 10", "High level alarm and response"),
             (StepKind.IPL, 0.01, "1 in 100", "High level trip")]
    steps = [make_step(session, scenario, kind=kind, value=value, value_text=text,
                       description=words, position=10 + i)
             for i, (kind, value, text, words) in enumerate(kinds)]
    make_safeguard(session, scenario)
    study = session.get(Study, scenario.study_id)
    node = session.exec(select(Node).where(Node.study_id == scenario.study_id)).one()
    page.goto(f"{live_server}/studies/{scenario.study_id}/nodes/{node.id}")
    first = session.exec(select(Step).where(Step.scenario_id == scenario.id,
                                            Step.kind == StepKind.INITIATING_EVENT)).one()
    return {"scenario": scenario, "steps": steps, "study": study, "initiating": first}


def tab_route(page: Page, limit: int = 400) -> list[str]:
    """Press Tab from the top of the page until focus leaves the page; the probes reached."""
    page.locator("body").focus()
    reached: list[str] = []
    for _ in range(limit):
        page.keyboard.press("Tab")
        probe = page.evaluate("() => document.activeElement.dataset.probe || ''")
        if page.evaluate("() => document.activeElement === document.body"):
            break
        reached.append(probe)
    return reached


def test_every_link_button_and_field_of_the_worksheet_is_on_the_tab_route(
    page: Page, node_page: dict[str, Any]
) -> None:
    controls = page.evaluate(_MARK_CONTROLS)
    reached = set(tab_route(page))
    missed = [c for c in controls if c["probe"] not in reached]
    assert missed == []
    kinds = Counter(c["tag"] for c in controls)
    # each kind of control is there to be reached: links (details, proof test, actions, node
    # switcher), buttons (move, add, delete is a link), inputs and the severity select
    assert kinds["a"] >= 8 and kinds["button"] >= 10 and kinds["input"] >= 20
    assert kinds["select"] >= 1
    details = [c for c in controls if c["text"].startswith("Details of step")]
    proof_tests = [c for c in controls if c["text"].startswith("Proof test of step")]
    assert len(details) == 4 and len(proof_tests) == 2  # IE, CM, two IPLs; the two IPLs


def test_the_first_tab_stop_skips_to_the_first_value(page: Page, node_page: dict[str, Any]) -> None:
    page.locator("body").focus()
    page.keyboard.press("Tab")
    skip = page.locator("#skip-to-value")
    expect(skip).to_be_focused()
    expect(skip).to_have_text("Skip to the first value")
    expect(skip).to_be_in_viewport()
    page.keyboard.press("Enter")
    expect(page.locator(f"#step-{node_page['initiating'].id}-value_text")).to_be_focused()


def accessible_names(page: Page) -> list[dict[str, str]]:
    """Role and name of every form field Chromium exposes to assistive technology."""
    cdp = page.context.new_cdp_session(page)
    tree = cdp.send("Accessibility.getFullAXTree")
    cdp.detach()
    fields = []
    for ax in tree["nodes"]:
        role = ax.get("role", {}).get("value", "")
        if role in {"textbox", "combobox", "checkbox"} and not ax.get("ignored"):
            fields.append({"role": role, "name": ax.get("name", {}).get("value", "")})
    return fields


def test_no_two_fields_on_a_node_share_a_name_and_each_says_scenario_step_and_column(
    page: Page, node_page: dict[str, Any]
) -> None:
    names = [f["name"] for f in accessible_names(page)]
    assert len(names) >= 30
    assert [name for name, count in Counter(names).items() if count > 1] == []
    for expected in ["Scenario 1.1.1, Cause", "Scenario 1.1.1, Severity",
                     "Scenario 1.1.1, step 1, Frequency", "Scenario 1.1.1, step 1, Description",
                     "Scenario 1.1.1, step 2, Probability", "Scenario 1.1.1, step 4, PFD",
                     "Scenario 1.1.1, step 5, Basis", "Scenario 1.1.1, step 5, credit this layer",
                     "Scenario 1.1.1, safeguard 1, Safeguard", "Node 1, Name",
                     "Deviation 1.1, Guideword", "New safeguard for scenario 1.1.1"]:
        assert expected in names


def test_a_fields_name_does_not_change_while_typing(page: Page, node_page: dict[str, Any]) -> None:
    value = page.locator(f"#step-{node_page['steps'][3].id}-value_text")
    before = value.evaluate("el => el.getAttribute('aria-label')")
    assert before == "Scenario 1.1.1, step 5, PFD"
    names_before = accessible_names(page)
    value.fill("")
    value.press_sequentially("1 in 1000", delay=30)
    expect(page.locator(f"#step-{node_page['steps'][3].id}-value_text-said")).to_have_text(
        "1 in 1,000 · 1.0e-3")
    assert accessible_names(page) == names_before
    described = value.evaluate(
        "el => document.getElementById(el.getAttribute('aria-describedby')).textContent")
    assert described == "1 in 1,000 · 1.0e-3"


LIVE_REGIONS = """() => document.querySelectorAll(
  '[aria-live]:not([aria-live=off]), [role=status], [role=alert], [role=log], [role=marquee],' +
  '[role=timer]').length"""

# Record every alert that appears (added, or an attribute turned into one) and every text the
# page's status region takes.
_WATCH = """() => {
  window.__alerts = []; window.__said = [];
  const isAlert = (el) => el.nodeType === 1 && (el.getAttribute('role') === 'alert' ||
    el.getAttribute('aria-live') === 'assertive');
  new MutationObserver((changes) => {
    for (const change of changes) {
      if (change.type === 'attributes' && isAlert(change.target)) {
        window.__alerts.push(change.target.outerHTML);
      }
      for (const added of change.addedNodes || []) {
        if (isAlert(added)) window.__alerts.push(added.outerHTML);
        if (added.querySelectorAll) added.querySelectorAll('[role=alert],[aria-live=assertive]')
          .forEach(el => window.__alerts.push(el.outerHTML));
      }
    }
  }).observe(document.body, {subtree: true, childList: true, attributes: true,
                             attributeFilter: ['role', 'aria-live']});
  const status = document.getElementById('page-status');
  new MutationObserver(() => window.__said.push(status.textContent))
    .observe(status, {childList: true, characterData: true, subtree: true});
}"""


def test_one_live_region_on_a_node_and_typing_two_values_raises_no_alert(
    page: Page, node_page: dict[str, Any]
) -> None:
    assert page.evaluate(LIVE_REGIONS) == 1
    page.evaluate(_WATCH)
    initiating = page.locator(f"#step-{node_page['initiating'].id}-value_text")
    initiating.fill("")
    initiating.press_sequentially("1 in 5 years", delay=40)  # "1 in", "1 in 5 y" are unreadable
    trip = page.locator(f"#step-{node_page['steps'][3].id}-value_text")
    trip.fill("")
    trip.press_sequentially("1 in 1000", delay=40)
    # 0.2/yr x 0.5 x 0.5 x 0.1 x 0.001 = 5.0e-6 per year, below the 1e-5 target
    results = page.locator(f"#scenario-{node_page['scenario'].id}-results")
    mitigated = results.locator("[data-figure='mitigated']")
    expect(mitigated).to_have_text("5.0e-6 /yr")
    expect(page.locator("#page-status")).to_contain_text(
        "Scenario 1.1.1: mitigated 5.0e-6 /yr", timeout=5000)
    assert page.evaluate("() => window.__alerts") == []
    said = page.evaluate("() => window.__said")
    assert 1 <= len(said) <= 2  # once per pause in typing, never per keystroke
    assert page.evaluate(LIVE_REGIONS) == 1
    assert axe_violations(page) == []


def test_an_unreadable_value_is_said_once_typing_pauses_not_as_an_alert(
    page: Page, node_page: dict[str, Any]
) -> None:
    page.evaluate(_WATCH)
    trip = page.locator(f"#step-{node_page['steps'][3].id}-value_text")
    trip.fill("")
    trip.press_sequentially("1 in lots", delay=30)
    expect(trip).to_have_attribute("aria-invalid", "true")
    expect(page.locator("#page-status")).to_contain_text(
        "Scenario 1.1.1, step 5, PFD: not read.", timeout=5000)
    assert page.evaluate("() => window.__alerts") == []
    assert axe_violations(page) == []


def test_the_room_views_poll_keeps_its_one_live_region_and_says_a_change_once(
    page: Page, browser: Browser, live_server: str, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    layer = make_step(session, scenario, value=0.1, value_text="1 in 10", description="Trip")
    room_context = browser.new_context()
    room = room_context.new_page()
    room.goto(f"{live_server}/studies/{scenario.study_id}/room")
    expect(room.locator("#room-mitigated")).to_have_text("1.0e-2 /yr")
    assert room.evaluate(LIVE_REGIONS) == 1
    room.evaluate("() => { document.getElementById('page-status').dataset.mark = 'kept'; }")
    room.evaluate(_WATCH)
    room.wait_for_timeout(1500)  # a few polls with nothing new: nothing is said
    assert room.evaluate("() => window.__said") == []
    deviation = session.get(Deviation, scenario.deviation_id)
    assert deviation is not None
    page.goto(f"{live_server}/studies/{scenario.study_id}/nodes/{deviation.node_id}")
    value = page.locator(f"#step-{layer.id}-value_text")
    value.fill("")
    value.press_sequentially("1 in 1000", delay=20)
    # 0.1/yr x 0.001 = 1.0e-4 per year
    expect(room.locator("#room-mitigated")).to_have_text("1.0e-4 /yr")
    expect(room.locator("#page-status")).to_contain_text("mitigated 1.0e-4 /yr")
    room.wait_for_timeout(1500)
    assert room.locator("#page-status").get_attribute("data-mark") == "kept"
    assert room.evaluate(LIVE_REGIONS) == 1
    assert room.evaluate("() => window.__alerts") == []
    assert len(room.evaluate("() => window.__said")) == 1  # said once, not per keystroke
    room_context.close()
