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


def test_the_summary_beside_it_shows_progress_then_downloads_a_summary_pdf(
    page: Page, live_server: str, demo_study: Study, artifacts: Path
) -> None:
    page.goto(f"{live_server}/studies/{demo_study.id}/export")
    page.locator("#start-summary").click()
    expect(page.locator("#report-job")).to_contain_text("summary report")
    link = page.locator("#report-download")
    expect(link).to_be_visible(timeout=120_000)
    page.screenshot(path=str(artifacts / "summary-ready.png"), full_page=True)
    with page.expect_download() as download_info:
        link.click()
    assert download_info.value.suggested_filename.endswith("-summary.pdf")
    saved = artifacts / "demo-summary.pdf"
    download_info.value.save_as(saved)
    assert saved.read_bytes().startswith(b"%PDF-")
