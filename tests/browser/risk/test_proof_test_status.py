"""The proof-test calculator updates as one types without alerts: its result is said once in the
page's one status region when typing pauses (WCAG 2.1, 4.1.3 status messages)."""

from playwright.sync_api import Page, expect
from sqlmodel import Session

from tests.factories import make_scenario_tree

LIVE_REGIONS = """() => document.querySelectorAll(
  '[aria-live]:not([aria-live=off]), [role=status], [role=alert], [role=log], [role=marquee],' +
  '[role=timer]').length"""
_WATCH_ALERTS = """() => {
  window.__alerts = [];
  new MutationObserver(() => {
    document.querySelectorAll('[role=alert], [aria-live=assertive]')
      .forEach(el => window.__alerts.push(el.outerHTML));
  }).observe(document.body, {subtree: true, childList: true, attributes: true});
}"""


def test_typing_in_the_calculator_says_the_result_once_and_raises_no_alert(
    page: Page, live_server: str, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    page.goto(f"{live_server}/studies/{scenario.study_id}/proof-test")
    assert page.evaluate(LIVE_REGIONS) == 1
    page.evaluate(_WATCH_ALERTS)
    lambda_du = page.locator("#pt-lambda_du")
    lambda_du.fill("")
    lambda_du.press_sequentially("5e-7", delay=40)
    shown = page.locator("#pfd-avg")
    expect(shown).not_to_be_empty()
    expect(page.locator("#page-status")).to_have_text(
        f"PFDavg {shown.inner_text()}, RRF {page.locator('#pfd-rrf').inner_text()}, "
        f"{page.locator('#pfd-band').inner_text()}.", timeout=5000)
    lambda_du.press_sequentially(" per hour??", delay=40)
    expect(page.locator("#page-status")).to_have_text(
        "No result: correct the fields marked above.", timeout=5000)
    assert page.evaluate("() => window.__alerts") == []
    assert page.evaluate(LIVE_REGIONS) == 1
