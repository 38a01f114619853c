"""The risk picture and the proof-test calculator in a real browser."""

from pathlib import Path

from playwright.sync_api import Page, expect
from sqlmodel import Session

from app.db.models import Study
from tests.factories import make_scenario_tree, make_step


def test_clicking_a_matrix_cell_lists_its_scenarios(
    page: Page, live_server: str, demo_study: Study, artifacts: Path
) -> None:
    page.goto(f"{live_server}/studies/{demo_study.id}/risk")
    expect(page.locator("#ranked-table tbody tr").first).to_be_visible()
    page.screenshot(path=str(artifacts / "risk.png"), full_page=True)
    cell = page.locator('g.matrix-cell:not([data-count="0"])').first
    count = int(cell.get_attribute("data-count") or "0")
    cell.locator("a").click()
    expect(page).to_have_url(f"{live_server}/studies/{demo_study.id}/risk?cell="
                             f"{cell.get_attribute('data-cell')}#cell-scenarios")
    expect(page.locator("#cell-table tbody tr")).to_have_count(count)
    page.locator("#risk-matrix").screenshot(path=str(artifacts / "risk-matrix-selected.png"))


def test_typing_in_the_calculator_updates_pfdavg(
    page: Page, live_server: str, session: Session, artifacts: Path
) -> None:
    scenario = make_scenario_tree(session)
    step = make_step(session, scenario, value=0.1, description="Overfill trip")
    page.goto(f"{live_server}/studies/{scenario.study_id}/proof-test?step_id={step.id}")
    lambda_du = page.locator("#pt-lambda_du")
    lambda_du.fill("")
    lambda_du.type("1e-6")
    # 1oo1, lambda_DU 1e-6 /h, T1 one year (8760 h), MTTR 8 h: 1e-6 x (4380 + 8) = 4.39e-3.
    expect(page.locator("#pfd-avg")).to_have_text("4.39e-3")
    expect(page.locator("#pfd-band")).to_have_text("SIL 2")
    lambda_du.fill("lots")
    expect(page.locator("#pt-lambda_du-error")).to_contain_text("λDU: not a number")
    lambda_du.fill("2e-7")
    expect(page.locator("#pfd-avg")).to_have_text("8.78e-4")
    expect(page.locator("#pt-lambda_du-error")).to_have_count(0)
    page.screenshot(path=str(artifacts / "proof-test.png"), full_page=True)
    page.locator("#apply-pfd").click()
    expect(page.locator(".saved-note")).to_contain_text("The step now uses PFD 8.8e-4")
