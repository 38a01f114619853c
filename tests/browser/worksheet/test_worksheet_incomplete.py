"""In a real browser: a scenario just added is "incomplete" on the worksheet and in the room
view, with no target and no SIL, until the team gives its initiating frequency and severity;
then its figures appear on both. 1 in 1000 a year against the factory's 1e-5 a year: 100
times too frequent, +2.0 orders (hand computation)."""

from pathlib import Path

from playwright.sync_api import Browser, Page, expect
from sqlmodel import Session, col, select

from app.db.models import Deviation, Scenario
from tests.browser.conftest import SCREEN
from tests.factories import make_scenario_tree


def test_a_new_scenario_is_incomplete_until_frequency_and_severity_are_given(
    page: Page, browser: Browser, live_server: str, session: Session, artifacts: Path
) -> None:
    first = make_scenario_tree(session)
    deviation = session.get(Deviation, first.deviation_id)
    assert deviation is not None
    page.goto(f"{live_server}/studies/{first.study_id}/nodes/{deviation.node_id}")
    page.locator("form[data-add='scenario'] button").click()
    expect(page.locator("article.scenario")).to_have_count(2)
    session.expire_all()
    added = session.exec(select(Scenario).where(Scenario.deviation_id == deviation.id)
                         .order_by(col(Scenario.id).desc())).first()
    assert added is not None and added.id != first.id
    row_mark = page.locator(f"#scenario-{added.id}-state")
    results = page.locator(f"#scenario-{added.id}-results")
    expect(row_mark).to_have_text("◌ incomplete")
    expect(results.locator("[data-figure='incomplete']")).to_contain_text(
        "Incomplete: no initiating event frequency and no severity yet")
    expect(results.locator("[data-figure='sil']")).to_have_count(0)

    room_context = browser.new_context(viewport=SCREEN)
    room = room_context.new_page()
    frequency = page.locator(f"#steps-{added.id} [data-kind='initiating_event'] "
                             "input[data-value-field]")
    frequency.click()  # the scribe's focus moves to the new scenario: the room follows
    room.goto(f"{live_server}/studies/{first.study_id}/room")
    expect(room.locator("#room-scenario")).to_have_attribute("data-scenario", str(added.id))
    expect(room.locator("[data-figure='incomplete']")).to_contain_text("Incomplete")
    expect(room.locator("#room-sil")).to_have_count(0)
    room.screenshot(path=artifacts / "room-incomplete.png")

    frequency.press_sequentially("1 in 1000", delay=20)
    expect(results.locator("[data-figure='incomplete']")).to_contain_text(
        "Incomplete: no severity yet")
    page.locator(f"#sc-{added.id}-severity_category_id").select_option(
        label="Single fatality (1.0e-5/yr)")
    expect(results.locator("[data-figure='mitigated']")).to_have_text("1.0e-3 /yr")
    expect(results.locator("[data-figure='gap']")).to_contain_text("+2.0 orders")
    expect(row_mark).to_have_text("")
    expect(room.locator("#room-mitigated")).to_have_text("1.0e-3 /yr", timeout=2000)
    expect(room.locator("#room-sil")).to_contain_text("SIL")
    page.screenshot(path=artifacts / "worksheet-incomplete-then-complete.png", full_page=True)
    room_context.close()


def test_the_overview_and_the_risk_picture_say_what_they_leave_out(
    page: Page, live_server: str, session: Session, artifacts: Path
) -> None:
    first = make_scenario_tree(session)
    deviation = session.get(Deviation, first.deviation_id)
    assert deviation is not None
    page.goto(f"{live_server}/studies/{first.study_id}/nodes/{deviation.node_id}")
    page.locator("form[data-add='scenario'] button").click()
    expect(page.locator("article.scenario")).to_have_count(2)
    page.goto(f"{live_server}/studies/{first.study_id}")
    expect(page.locator("[data-total='incomplete']")).to_have_text("1")
    expect(page.locator("[data-incomplete]")).to_have_text("◌ incomplete")
    page.screenshot(path=artifacts / "overview-incomplete.png", full_page=True)
    page.goto(f"{live_server}/studies/{first.study_id}/risk")
    expect(page.locator("[data-left-out]")).to_have_count(3)
    expect(page.locator("#incomplete-list [data-incomplete]")).to_have_count(1)
    page.screenshot(path=artifacts / "risk-incomplete.png", full_page=True)
