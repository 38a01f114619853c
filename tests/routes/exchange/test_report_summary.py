"""The summary report is offered beside the full one, made through the same background job,
and on the demo names every scenario short of target, the criteria and the cautions."""

import math
import shutil
from pathlib import Path

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import Revision, SeverityCategory, Study
from app.routes.rendering import CAUTIONS
from app.services.exchange.export_tables import scenario_refs
from app.services.study.tree import load_study_tree
from tests.helpers import HX
from tests.routes.exchange.test_report_jobs import _finished, _pages

needs_poppler = pytest.mark.skipif(shutil.which("pdftotext") is None,
                                   reason="poppler-utils not installed")


def _short_refs_by_gap(session: Session, study_id: int) -> list[str]:
    """Worked out here from each scenario's own figures: the computed scenarios whose
    mitigated frequency exceeds their target, largest log10(mitigated / target) first."""
    tree = load_study_tree(session, study_id)
    refs = scenario_refs(tree)
    short = [(math.log10(r.mitigated_frequency / r.tolerable_frequency),
              refs[i.scenario.id or 0])
             for i in tree.scenario_branches()
             if (r := i.outcome.result) is not None
             and r.mitigated_frequency > r.tolerable_frequency]
    return [ref for _gap, ref in sorted(short, key=lambda pair: -pair[0])]


@needs_poppler
def test_the_demos_summary_names_the_short_scenarios_the_criteria_and_the_cautions(
    client: TestClient, session: Session, demo_study: Study, tmp_path: Path
) -> None:
    study_id = demo_study.id or 0
    job_url = _start_summary(client, study_id, {"kind": "summary"})
    fragment = _finished(client, study_id, job_url)
    assert "The summary report is ready" in fragment, fragment
    download = client.get(f"{job_url}/file")
    assert download.headers["content-type"] == "application/pdf"
    assert "-summary.pdf" in download.headers["content-disposition"]
    pages = _pages(download.content, tmp_path)
    caution_words = " ".join(CAUTIONS.split())
    for page in pages:
        assert caution_words in page  # every page's footer
    text = " ".join(pages)
    categories = session.exec(select(SeverityCategory).where(
        SeverityCategory.study_id == study_id)).all()
    assert categories
    for category in categories:
        assert " ".join(category.name.split()) in text
    short = _short_refs_by_gap(session, study_id)
    assert short, "the demo has scenarios short of target"
    listed = text.split("Scenarios short of target, largest gap first")[1]
    positions = [listed.index(f" {ref} ") for ref in short]
    assert positions == sorted(positions)  # largest gap first
    assert "more scenarios short of target" not in text  # the demo is under the cap


@needs_poppler
def test_a_revisions_summary_carries_its_label_and_the_full_report_still_starts(
    client: TestClient, session: Session, demo_study: Study, tmp_path: Path
) -> None:
    study_id = demo_study.id or 0
    client.post(f"/studies/{study_id}/revisions",
                data={"label": "Rev A", "signed_off_by": "Dana Whitlock", "note": ""})
    revision_id = str(session.exec(select(Revision.id).where(Revision.study_id == study_id)).one())
    detail = client.get(f"/studies/{study_id}/revisions/{revision_id}").text
    assert 'name="kind" value="summary"' in detail and 'id="start-report"' in detail
    job_url = _start_summary(client, study_id, {"revision_id": revision_id, "kind": "summary"})
    assert "The summary report is ready" in _finished(client, study_id, job_url)
    download = client.get(f"{job_url}/file")
    assert "-rev-a-summary.pdf" in download.headers["content-disposition"]
    for page in _pages(download.content, tmp_path):
        assert "Rev A, signed off by Dana Whitlock on 20" in page
    # Without a kind the job is the full report, as before.
    assert "Making the report" in client.post(f"/studies/{study_id}/report-jobs", data={},
                                              headers=HX).text


def test_the_exports_page_offers_the_summary_beside_the_full_report(
    client: TestClient, demo_study: Study
) -> None:
    page = client.get(f"/studies/{demo_study.id}/export").text
    row = page.split('data-format="pdf"')[1].split("</tr>")[0]
    assert 'id="start-report"' in row and 'id="start-summary"' in row
    assert 'name="kind" value="summary"' in row


def test_an_unknown_report_kind_is_refused_with_a_message_not_a_server_error(
    client: TestClient, demo_study: Study
) -> None:
    response = client.post(f"/studies/{demo_study.id}/report-jobs", data={"kind": "poster"},
                           headers=HX)
    assert response.status_code == 422
    assert "summary" in response.text  # the message names the kinds allowed


def _start_summary(client: TestClient, study_id: int, data: dict[str, str]) -> str:
    response = client.post(f"/studies/{study_id}/report-jobs", data=data, headers=HX)
    assert response.status_code == 200, response.text
    assert "Making the summary report" in response.text
    job_id = response.text.split("/report-jobs/")[1].split('"')[0]
    return f"/studies/{study_id}/report-jobs/{job_id}"
