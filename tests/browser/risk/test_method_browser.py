"""Issue 9 in a real browser: the step details form's new fields, and the worksheet's
receptor lines, demand line and figures with flagged credits withdrawn."""

from pathlib import Path

from playwright.sync_api import Page, expect
from sqlmodel import Session

from app.db.models import Receptor, Study
from app.likelihood.types import StepKind
from tests.factories import make_category, make_scenario_tree, make_step


def test_the_step_details_form_saves_times_and_a_modifiers_receptors(
    page: Page, live_server: str, session: Session, artifacts: Path
) -> None:
    scenario = make_scenario_tree(session)
    layer = make_step(session, scenario, value=0.1, description="Operator stops the pump")
    modifier = make_step(session, scenario, kind=StepKind.CONDITIONAL_MODIFIER, value=0.5,
                         description="Probability of injury", position=1)
    page.goto(f"{live_server}/studies/{scenario.study_id}/steps/{layer.id}/details")
    page.select_option("#ipl_type", "operator_response")
    page.fill("#time_available_minutes", "20")
    page.fill("#time_to_detect_and_act_minutes", "25")
    page.check("#acts_after_sif")
    page.locator("button", has_text="Save details").click()
    expect(page.locator(".saved-note")).to_contain_text("Saved")
    # 25 min to detect and act of 20 available: no time is left (CCPS 2001 ch. 6 concept).
    expect(page.locator('[data-rule="operator_time_margin"]')).to_be_visible()
    expect(page.locator("#time_available_minutes")).to_have_value("20")
    expect(page.locator("#acts_after_sif")).to_be_checked()
    page.screenshot(path=str(artifacts / "step-details-times.png"), full_page=True)
    page.goto(f"{live_server}/studies/{scenario.study_id}/steps/{modifier.id}/details")
    page.select_option("#modifier_kind", "vulnerability")
    page.check('input[name="receptors"][value="people"]')
    page.locator("button", has_text="Save details").click()
    expect(page.locator(".saved-note")).to_contain_text("Saved")
    expect(page.locator('input[name="receptors"][value="people"]')).to_be_checked()
    expect(page.locator('input[name="receptors"][value="asset"]')).not_to_be_checked()


def test_the_worksheet_shows_each_receptor_line_and_the_withdrawn_figures(
    page: Page, live_server: str, session: Session, artifacts: Path
) -> None:
    """People 1e-5 /yr, environment 1e-4 /yr; IE 0.1 /yr, presence 0.1 (people only), a BPCS
    layer at PFD 0.01 that the BPCS check doubts (IEC 61511-1:2016, clause 9.3).

    By hand: people 0.1 x 0.1 x 0.01 = 1e-4, ratio 10; environment 0.1 x 0.01 = 1e-3,
    ratio 10, a tie: people (first in receptor order) governs. Withdrawn (PFD 1): people
    1e-2 and environment 1e-1, both ratio 1000; people governs again, so 1e-2 /yr.
    """
    scenario = make_scenario_tree(session)
    study = session.get(Study, scenario.study_id)
    assert study is not None
    environment = make_category(session, study, name="E1 Local spill",
                                tolerable_frequency=1e-4, receptor=Receptor.ENVIRONMENT)
    scenario.environment_category_id = environment.id
    session.add(scenario)
    session.commit()
    make_step(session, scenario, kind=StepKind.CONDITIONAL_MODIFIER, value=0.1,
              description="Someone present", modifier_kind="presence", position=1)
    make_step(session, scenario, value=0.01, description="DCS trip", ipl_type="bpcs",
              system_tag="DCS-2")
    page.goto(f"{live_server}/studies/{scenario.study_id}/worksheet")
    results = page.locator(f"#scenario-{scenario.id}-results")
    lines = results.locator("table[data-receptor-lines] tbody tr")
    expect(lines).to_have_count(3)
    expect(results.locator('tr[data-receptor="environment"] [data-line="mitigated"]')
           ).to_have_text("1.0e-3")
    expect(results.locator('tr[data-receptor="asset"]')).to_contain_text("not rated")
    expect(results.locator("[data-demand='mode']").first).to_contain_text("demand")
    expect(results.locator("[data-withdrawn]")).to_contain_text("DCS trip taken at PFD 1")
    expect(results.locator("[data-withdrawn-figure='mitigated']")).to_have_text("1.0e-2 /yr")
    results.screenshot(path=str(artifacts / "worksheet-receptor-lines.png"))
