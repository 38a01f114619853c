"""The PDF report is made in the background: start, poll, download; a frozen revision's report
prints its label and sign-off on every page."""

import shutil
import subprocess
import threading
import time
from pathlib import Path

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import Revision, Scenario, Study
from app.services.exchange import report_jobs
from tests.conftest import TEST_DATABASE_URL
from tests.helpers import HX


def _pages(pdf: bytes, folder: Path) -> list[str]:
    path = folder / "report.pdf"
    path.write_bytes(pdf)
    text = subprocess.run(["pdftotext", str(path), "-"], check=True, capture_output=True,
                          text=True).stdout
    return [" ".join(page.split()) for page in text.split("\f") if page.strip()]


def _finished(client: TestClient, study_id: int, job_url: str) -> str:
    """Poll the job as the page does until it stops polling; the last fragment."""
    for _ in range(240):
        fragment = client.get(job_url, headers=HX).text
        if "hx-get" not in fragment:
            return fragment
        time.sleep(0.5)
    raise AssertionError("the report job did not finish in two minutes")


def _start(client: TestClient, study_id: int, data: dict[str, str]) -> str:
    response = client.post(f"/studies/{study_id}/report-jobs", data=data, headers=HX)
    assert response.status_code == 200
    assert "Making the report" in response.text and 'hx-trigger="every 1s"' in response.text
    job_id = response.text.split("/report-jobs/")[1].split('"')[0]
    return f"/studies/{study_id}/report-jobs/{job_id}"


@pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler-utils not installed")
def test_a_frozen_revisions_report_prints_its_label_and_sign_off_on_every_page(
    client: TestClient, session: Session, demo_study: Study, tmp_path: Path
) -> None:
    study_id = demo_study.id or 0
    frozen = client.post(f"/studies/{study_id}/revisions",
                         data={"label": "Rev A", "signed_off_by": "Dana Whitlock", "note": ""})
    assert frozen.status_code == 200
    revision_id = str(session.exec(select(Revision.id).where(Revision.study_id == study_id)).one())
    job_url = _start(client, study_id, {"revision_id": revision_id})
    # Other requests are answered while the report is being made.
    assert client.get(f"/studies/{study_id}/changes").status_code == 200
    fragment = _finished(client, study_id, job_url)
    assert "The report is ready" in fragment, fragment
    download = client.get(f"{job_url}/file")
    assert download.headers["content-type"] == "application/pdf"
    assert "-rev-a.pdf" in download.headers["content-disposition"]
    pages = _pages(download.content, tmp_path)
    assert len(pages) > 5
    for page in pages:
        assert "Rev A, signed off by Dana Whitlock on 20" in page
    assert pages[0].count("Rev A, signed off by Dana Whitlock") == 2  # the cover and its footer


@pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler-utils not installed")
def test_the_working_copys_report_says_since_which_revision_and_not_signed(
    client: TestClient, session: Session, demo_study: Study, tmp_path: Path
) -> None:
    study_id = demo_study.id or 0
    client.post(f"/studies/{study_id}/revisions",
                data={"label": "Rev A", "signed_off_by": "Dana Whitlock", "note": ""})
    job_url = _start(client, study_id, {})
    assert "The report is ready" in _finished(client, study_id, job_url)
    for page in _pages(client.get(f"{job_url}/file").content, tmp_path):
        assert "working copy since Rev A: working copy, not signed" in page


def test_an_unknown_job_is_404_and_an_unfinished_one_409(
    client: TestClient, demo_study: Study, tmp_path: Path
) -> None:
    study_id = demo_study.id or 0
    assert client.get(f"/studies/{study_id}/report-jobs/nope").status_code == 404
    assert client.get(f"/studies/{study_id}/report-jobs/..%2F..%2Fx").status_code == 404
    folder = report_jobs.reports_folder(TEST_DATABASE_URL)
    release = threading.Event()
    job = report_jobs.start_report_job(folder, study_id=study_id, revision_id=None,
                                       filename="x.pdf", database_url=TEST_DATABASE_URL,
                                       launch=lambda *_: (release.wait(10), (0, ""))[1])
    response = client.get(f"/studies/{study_id}/report-jobs/{job.job_id}/file")
    assert response.status_code == 409 and "not ready yet" in response.text
    assert client.get(f"/studies/{study_id + 1}/report-jobs/{job.job_id}").status_code == 404
    release.set()


def test_a_failed_build_shows_why_and_a_way_back_never_a_server_error(
    client: TestClient, demo_study: Study
) -> None:
    study_id = demo_study.id or 0
    folder = report_jobs.reports_folder(TEST_DATABASE_URL)
    job = report_jobs.ReportJob("c" * 32, study_id, None, report_jobs.ReportKind.FULL,
                                "r.pdf", "2026-11-12T15:30:00+00:00",
                                state=report_jobs.JobState.FAILED,
                                error="The report could not be built: There is no study 5.")
    report_jobs.write_job(folder, job)
    page = client.get(f"/studies/{study_id}/report-jobs/{job.job_id}")
    assert page.status_code == 200
    assert "The report could not be built: There is no study 5." in page.text
    assert "hx-get" not in page.text.split('id="report-job"')[1].split(">")[0]  # stops polling
    assert client.get(f"/studies/{study_id}/report-jobs/{job.job_id}/file").status_code == 409


def test_export_pdf_of_a_study_too_large_to_build_in_the_request_points_to_the_build(
    client: TestClient, session: Session, demo_study: Study, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Above REQUEST_REPORT_SCENARIOS, /export.pdf answers at once with the export page (409)
    saying why and where: the background build on that page. At the limit it builds here."""
    from app.services.exchange import exports
    from tests.helpers import text_of

    study_id = demo_study.id or 0
    count = len(session.exec(select(Scenario.id).where(Scenario.study_id == study_id)).all())
    monkeypatch.setattr(exports, "REQUEST_REPORT_SCENARIOS", count - 1)
    refused = client.get(f"/studies/{study_id}/export.pdf")
    assert refused.status_code == 409
    assert refused.headers["content-type"].startswith("text/html")
    notice = text_of(refused.text, "report-notice")
    assert f"This study has {count} scenarios" in notice
    assert f"more than {count - 1} is built in the background" in notice
    assert "Build the full report" in notice and 'id="start-report"' in refused.text
    monkeypatch.setattr(exports, "REQUEST_REPORT_SCENARIOS", count)
    built = client.get(f"/studies/{study_id}/export.pdf")
    assert built.status_code == 200 and built.content.startswith(b"%PDF-")


def test_a_missing_study_is_a_404_not_a_refusal(client: TestClient) -> None:
    assert client.get("/studies/987654/export.pdf").status_code == 404
