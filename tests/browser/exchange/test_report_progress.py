"""In a real browser: 'Make the report' shows progress, then a download link for the PDF."""

from pathlib import Path

from playwright.sync_api import Page, expect

from app.db.models import Study


def test_the_report_shows_progress_then_downloads(
    page: Page, live_server: str, demo_study: Study, artifacts: Path
) -> None:
    page.goto(f"{live_server}/studies/{demo_study.id}/export")
    page.locator("#start-report").click()
    job = page.locator("#report-job")
    expect(job).to_contain_text("Making the report")
    page.screenshot(path=str(artifacts / "report-in-progress.png"))
    link = page.locator("#report-download")
    expect(link).to_be_visible(timeout=120_000)
    page.screenshot(path=str(artifacts / "report-ready.png"))
    with page.expect_download() as download_info:
        link.click()
    saved = artifacts / "demo-report.pdf"
    download_info.value.save_as(saved)
    assert saved.read_bytes().startswith(b"%PDF-")
