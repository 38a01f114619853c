"""In a real browser: the team orders its actions with Alt+arrows; focus stays on the row."""

from pathlib import Path

from playwright.sync_api import Page, expect
from sqlmodel import Session, col, select

from app.db.models import Recommendation
from app.services.record.actions import add_action
from tests.factories import make_scenario_tree


def _team_order(session: Session, study_id: int) -> list[str]:
    session.expire_all()
    return [a.text for a in session.exec(
        select(Recommendation).where(Recommendation.study_id == study_id)
        .order_by(col(Recommendation.position), col(Recommendation.id))).all()]


def test_alt_arrows_move_the_focused_row_through_the_team_order(
    page: Page, live_server: str, session: Session, artifacts: Path
) -> None:
    study_id = make_scenario_tree(session).study_id
    first, second, third = (
        add_action(session=session, study_id=study_id, text=text).id
        for text in ("Fit a high-level trip", "Add a bund alarm", "Retrain operators")
    )
    page.goto(f"{live_server}/studies/{study_id}/actions?order=team")
    rows = page.locator("#actions-table tbody tr")
    expect(page.get_by_role("link", name="Team order")).to_have_attribute("aria-current", "page")

    page.locator(f"#action-{second}").focus()
    page.keyboard.press("Alt+ArrowDown")
    expect(rows.nth(2)).to_have_attribute("id", f"action-{second}")
    expect(page.locator(f"#action-{second}")).to_be_focused()
    assert _team_order(session, study_id) == [
        "Fit a high-level trip", "Retrain operators", "Add a bund alarm"]

    page.keyboard.press("Alt+ArrowUp")  # the row kept the focus, so keys keep working
    expect(rows.nth(1)).to_have_attribute("id", f"action-{second}")
    page.keyboard.press("Alt+ArrowUp")
    expect(rows.nth(0)).to_have_attribute("id", f"action-{second}")
    expect(page.locator(f"#action-{second}")).to_be_focused()
    expect(rows.nth(0).locator("td").first).to_have_text("1")
    expect(rows.nth(0).get_by_role("button", name="Move action up")).to_be_disabled()
    assert [rows.nth(i).get_attribute("id") for i in range(3)] == [
        f"action-{second}", f"action-{first}", f"action-{third}"]
    assert _team_order(session, study_id) == [
        "Add a bund alarm", "Fit a high-level trip", "Retrain operators"]
    page.screenshot(path=str(artifacts / "actions-team-order.png"), full_page=True)
