"""In two real browsers on one worksheet: the later save of a field shows the conflict at the
field, with both values, and "keep mine" / "take theirs" settle it; nothing is lost unseen."""

from pathlib import Path

import pytest
from playwright.sync_api import Page, expect
from sqlmodel import Session, select

from app.db.models import ChangeLogEntry, Deviation, Scenario, Step
from tests.factories import make_scenario_tree, make_step


@pytest.fixture
def scenario(session: Session) -> Scenario:
    scenario = make_scenario_tree(session)
    make_step(session, scenario, value=0.1, value_text="1 in 10", description="High level trip")
    return scenario


def open_worksheet(page: Page, live_server: str, session: Session, scenario: Scenario) -> None:
    deviation = session.get(Deviation, scenario.deviation_id)
    assert deviation is not None
    page.goto(f"{live_server}/studies/{scenario.study_id}/nodes/{deviation.node_id}")


def type_and_leave(page: Page, selector: str, text: str) -> None:
    field = page.locator(selector)
    field.click()
    field.press("Control+a")
    field.press_sequentially(text, delay=10)
    field.press("Tab")


def test_two_people_on_one_field_see_the_conflict_and_settle_it(
    ada: Page, ben: Page, live_server: str, session: Session, scenario: Scenario,
    artifacts: Path,
) -> None:
    for page in (ada, ben):
        open_worksheet(page, live_server, session, scenario)
    cause = f"#sc-{scenario.id}-cause"

    type_and_leave(ada, cause, "Pump trips on low suction")
    expect(ada.locator(f"{cause}-said")).to_have_text("saved")
    type_and_leave(ben, cause, "Pump stopped by operator")

    box = ben.locator(f"{cause}-said[data-conflict]")
    expect(box).to_contain_text("Changed by Ada Scribe (invented)")
    expect(box.locator(".conflict-theirs")).to_have_text("Pump trips on low suction")
    expect(box.locator(".conflict-mine")).to_have_text("Pump stopped by operator")
    ben.screenshot(path=str(artifacts / "worksheet-conflict.png"))

    box.get_by_role("button", name="Take theirs").click()
    expect(ben.locator(cause)).to_have_value("Pump trips on low suction")
    expect(ben.locator(f"{cause}-said")).to_have_text("saved")
    session.expire_all()
    assert session.get(Scenario, scenario.id).cause == "Pump trips on low suction"  # type: ignore[union-attr]


def test_keep_mine_on_a_typed_value_saves_it_over_the_other_persons(
    ada: Page, ben: Page, live_server: str, session: Session, scenario: Scenario,
) -> None:
    step = session.exec(select(Step).where(Step.scenario_id == scenario.id,
                                           Step.description == "High level trip")).one()
    for page in (ada, ben):
        open_worksheet(page, live_server, session, scenario)
    value = f"#step-{step.id}-value_text"

    type_and_leave(ada, value, "0.01")
    expect(ada.locator(f"{value}-said")).to_contain_text("1 in 100")
    type_and_leave(ben, value, "0.05")
    box = ben.locator(f"{value}-said[data-conflict]")
    expect(box.locator(".conflict-theirs")).to_have_text("0.01")
    expect(box.locator(".conflict-mine")).to_have_text("0.05")

    box.get_by_role("button", name="Keep mine").click()
    expect(ben.locator(f"{value}-said")).to_contain_text("1 in 20")
    expect(ben.locator(f"#scenario-{scenario.id}-results [data-figure='mitigated']")
           ).to_have_text("5.0e-3 /yr")
    session.expire_all()
    assert session.get(Step, step.id).value_text == "0.05"  # type: ignore[union-attr]
    choice = session.exec(select(ChangeLogEntry).where(ChangeLogEntry.action == "conflict")).one()
    assert (choice.author, choice.old_value, choice.new_value) == (
        "Ben Other (invented)", "0.01", "0.05")
