"""In a real browser: a bad address shows the app's error page, never raw JSON."""

from pathlib import Path

import pytest
from playwright.sync_api import Page, expect

from app.db.models import Study


@pytest.mark.parametrize(("path", "status", "heading"), [
    ("/studies/987654", 404, "Not found"),
    ("/studies/abc/worksheet", 400, "Not understood"),
    ("/no-such-page", 404, "Not found"),
])
def test_a_bad_address_shows_the_error_page(
    page: Page, live_server: str, demo_study: Study, artifacts: Path, path: str, status: int,
    heading: str,
) -> None:
    response = page.goto(live_server + path)
    assert response is not None and response.status == status
    expect(page.get_by_role("heading", level=1)).to_contain_text(heading)
    expect(page.locator("header.masthead")).to_be_visible()
    expect(page.get_by_role("link", name="Back to the studies")).to_be_visible()
    assert not page.locator("body").inner_text().lstrip().startswith("{")
    if status == 400:
        page.screenshot(path=str(artifacts / "error-page-400.png"))
