"""In a real browser: the name set in the masthead signs the change log; actions by keyboard."""

from pathlib import Path

from playwright.sync_api import Page, expect
from sqlmodel import Session

from app.db.models import Study
from app.services.record.actions import add_action


def test_an_edit_appears_in_the_change_log_under_the_masthead_name(
    page: Page, live_server: str, demo_study: Study, session: Session, artifacts: Path
) -> None:
    add_action(session=session, study_id=demo_study.id, text="Check the relief valve sizing",
                  owner="A. Okafor")
    page.goto(f"{live_server}/studies/{demo_study.id}/actions")
    page.get_by_label("Name for the change log").fill("Wren Halvorsen-Pike")
    page.get_by_label("Name for the change log").press("Enter")
    expect(page.get_by_label("Name for the change log")).to_have_value("Wren Halvorsen-Pike")

    row = page.locator("#actions-table tr", has_text="Check the relief valve sizing")
    row.get_by_role("link", name="Edit").click()
    owner = page.locator("#edit-action-owner")
    expect(page.locator("#edit-action-text")).to_be_focused()
    owner.fill("R. Quillfeather")
    owner.press("Enter")  # Enter saves
    expect(page.locator("#actions-table")).to_contain_text("R. Quillfeather")

    page.get_by_role("link", name="Change log").click()
    newest = page.locator("#change-log tbody tr").first
    expect(newest).to_contain_text("Wren Halvorsen-Pike")
    expect(newest).to_contain_text("Owner")
    expect(newest).to_contain_text("A. Okafor → R. Quillfeather")
    expect(newest).to_contain_text("Check the relief valve sizing")  # the action by its text
    page.screenshot(path=str(artifacts / "change-log-in-words.png"), full_page=False)


def test_actions_are_added_with_enter_and_edits_cancelled_with_escape(
    page: Page, live_server: str, demo_study: Study, artifacts: Path
) -> None:
    page.goto(f"{live_server}/studies/{demo_study.id}/actions")
    text = page.locator("#new-action-text")
    text.fill("Confirm the bund drain valve is locked shut")
    page.locator("#new-action-rrf").fill("ten")
    page.locator("#new-action-rrf").press("Enter")
    expect(page.locator("#new-action-rrf-error")).to_contain_text("must be a number such as 100")
    expect(page.locator("#new-action-text")).to_have_value(
        "Confirm the bund drain valve is locked shut")
    page.locator("#new-action-rrf").fill("10")
    page.locator("#new-action-rrf").press("Enter")
    added = page.locator("#actions-table tr", has_text="Confirm the bund drain valve")
    expect(added).to_contain_text("10 (1.0 orders)")

    added.get_by_role("link", name="Edit").click()
    page.locator("#edit-action-text").fill("changed but cancelled")
    page.locator("#edit-action-text").press("Escape")
    expect(page.locator("#edit-action-text")).to_have_count(0)
    expect(page.locator("#actions-table")).to_contain_text("Confirm the bund drain valve")

    page.once("dialog", lambda dialog: dialog.accept())
    page.locator("#actions-table tr", has_text="Confirm the bund drain valve").get_by_role(
        "link", name="Delete").click()
    expect(page.locator("#actions-table")).not_to_contain_text("Confirm the bund drain valve")
    expect(page.locator("#actions-table .badge-overdue").first).to_be_visible()
    page.screenshot(path=str(artifacts / "actions.png"), full_page=True)
