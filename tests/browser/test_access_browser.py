"""In a real browser: no page breaks its Content-Security-Policy, and a participant joins on
the meeting-room network with the day's code and follows the room view."""

from collections.abc import Iterator

import pytest
from playwright.sync_api import Browser, ConsoleMessage, Page, expect
from sqlalchemy import Engine
from sqlmodel import Session

from app.access.state import set_passphrase, todays_join_code
from app.db.models import Study
from app.main import create_app
from app.settings import Settings
from tests.browser.conftest import serve_in_thread
from tests.security.conftest import PASSPHRASE


@pytest.fixture(scope="module")
def lan_server(db_engine: Engine) -> Iterator[str]:
    """The app in LAN mode (sign-in needed), served on a free loopback port."""
    yield from serve_in_thread(create_app(Settings(lan=True, host="0.0.0.0")))


def policy_violations(page: Page) -> list[str]:
    """Console messages in which the browser reports a blocked script, style or eval."""
    found: list[str] = []

    def watch(message: ConsoleMessage) -> None:
        if "Content Security Policy" in message.text or "Content-Security-Policy" in message.text:
            found.append(message.text)

    page.on("console", watch)
    return found


def test_editing_pages_work_under_the_policy_without_a_single_violation(
    page: Page, live_server: str, demo_study: Study
) -> None:
    violations = policy_violations(page)
    page.goto(f"{live_server}/studies/{demo_study.id}/worksheet")
    field = page.locator("[data-value-field]").first
    field.click()
    field.press("Control+a")
    field.press_sequentially("1 in 1000", delay=20)
    said = page.locator(f"#{field.get_attribute('id')}-said")
    expect(said).to_contain_text("1.0e-3")  # saved through htmx with the header token
    page.goto(f"{live_server}/studies/{demo_study.id}/actions")
    page.goto(f"{live_server}/studies/{demo_study.id}/room")
    expect(page.locator("#room-live")).to_be_visible()
    page.goto(f"{live_server}/help/keys")
    assert violations == []


def test_a_participant_joins_with_the_code_and_sees_the_room_but_not_the_worksheet(
    browser: Browser, lan_server: str, demo_study: Study, session: Session
) -> None:
    set_passphrase(session, PASSPHRASE)
    code = todays_join_code(session)
    phone = browser.new_context(viewport={"width": 390, "height": 844})
    page = phone.new_page()
    page.goto(f"{lan_server}/studies/{demo_study.id}/room")
    expect(page).to_have_url(f"{lan_server}/join?next=%2Fstudies%2F{demo_study.id}%2Froom")
    page.get_by_label("Join code").fill(code.lower())
    page.get_by_label("Your name").fill("T. Nakamura-Reyes")
    page.get_by_role("button", name="Join").click()
    expect(page).to_have_url(f"{lan_server}/studies/{demo_study.id}/room")
    expect(page.locator("#room-live")).to_be_visible()
    response = page.goto(f"{lan_server}/studies/{demo_study.id}/worksheet")
    assert response is not None and response.status == 403
    phone.close()
