"""In a real browser: 'Build the full report' shows its progress part by part, then a download
link for the PDF, whose pages pdftotext reads."""

import re
import shutil
import subprocess
from pathlib import Path

import pytest
from playwright.sync_api import Page, expect

from app.db.models import Study


@pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler-utils not installed")
def test_the_report_shows_progress_then_downloads(
    page: Page, live_server: str, demo_study: Study, artifacts: Path
) -> None:
    page.goto(f"{live_server}/studies/{demo_study.id}/export")
    page.locator("#start-report").click()
    job = page.locator("#report-job")
    expect(job).to_contain_text("Making the report")
    expect(page.locator("#report-refresh")).to_be_visible()  # without JavaScript: reload
    expect(page.locator("#report-progress")).to_contain_text("part ", timeout=60_000)
    progress = page.locator("#report-progress").inner_text()
    page.screenshot(path=str(artifacts / "report-in-progress.png"))
    assert re.match(r"part \d+ of \d+: \w", progress), progress  # e.g. "part 2 of 3: scenarios …"
    link = page.locator("#report-download")
    expect(link).to_be_visible(timeout=120_000)
    expect(job).to_contain_text("pages")
    page.screenshot(path=str(artifacts / "report-ready.png"))
    with page.expect_download() as download_info:
        link.click()
    saved = artifacts / "demo-report.pdf"
    download_info.value.save_as(saved)
    assert saved.read_bytes().startswith(b"%PDF-")
    text = subprocess.run(["pdftotext", str(saved), "-"], check=True, capture_output=True,
                          text=True).stdout
    pages = [" ".join(p.split()) for p in text.split("\f") if p.strip()]
    assert demo_study.title.split(" - ")[0] in pages[0]  # pdftotext may drop a dash at a break
    assert all(f"page {n} of {len(pages)}" in p for n, p in enumerate(pages, 1))
    assert any("3 · Scenarios by node" in p for p in pages)


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


def test_a_pdf_link_too_large_for_the_request_leads_to_the_build_with_progress(
    page: Page, live_server: str, demo_study: Study, artifacts: Path,
    monkeypatch: pytest.MonkeyPatch
) -> None:
    """Following /export.pdf of a study above REQUEST_REPORT_SCENARIOS lands at once on the
    export page, which says why and offers the background build; that build downloads."""
    from app.services.exchange import exports

    monkeypatch.setattr(exports, "REQUEST_REPORT_SCENARIOS", 1)
    response = page.goto(f"{live_server}/studies/{demo_study.id}/export.pdf")
    assert response is not None and response.status == 409
    notice = page.locator("#report-notice")
    expect(notice).to_contain_text("is built in the background")
    page.screenshot(path=str(artifacts / "report-too-large-notice.png"))
    page.locator("#start-report").click()
    link = page.locator("#report-download")
    expect(link).to_be_visible(timeout=120_000)
    with page.expect_download() as download_info:
        link.click()
    saved = artifacts / "demo-report-from-notice.pdf"
    download_info.value.save_as(saved)
    assert saved.read_bytes().startswith(b"%PDF-")
