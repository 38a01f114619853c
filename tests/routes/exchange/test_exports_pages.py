"""The export page and every download, read as a user and a spreadsheet program see them."""

import io
import json

import pytest
from fastapi.testclient import TestClient
from openpyxl import load_workbook
from sqlmodel import Session

from app.db.models import Study
from app.routes.rendering import CAUTIONS
from app.services.exchange.study_file import export_study
from app.services.exchange.study_schema import study_json_schema
from tests.factories import make_scenario_tree, make_step
from tests.helpers import table_rows


@pytest.fixture
def small_study(session: Session) -> Study:
    """A one-scenario study (IE 0.1/yr, one IPL at 0.01, target 1e-5/yr): quick to render."""
    scenario = make_scenario_tree(session, title="Export check (invented)")
    make_step(session, scenario, value=0.01, description="Relief valve")
    study = session.get(Study, scenario.study_id)
    assert study is not None
    return study


def test_the_export_page_offers_every_format_with_its_command(
    client: TestClient, small_study: Study
) -> None:
    study_id = small_study.id
    page = client.get(f"/studies/{study_id}/export")
    assert page.status_code == 200
    rows = table_rows(page.text, "export-formats")
    assert rows[0] == ["Format", "What the file holds", "Download", "Command line"]
    name = f"tallyroom-{study_id}-export-check-invented"
    assert [(row[0], row[2], row[3]) for row in rows[1:]] == [
        (label, "Build the full report Build the summary" if fmt == "pdf" else f"Download {fmt}",
         f"tallyroom export {study_id} --format {fmt} --out {name}.{fmt}")
        for label, fmt in [("Workbook (.xlsx)", "xlsx"), ("Scenario table (.csv)", "csv"),
                           ("Study file (.json)", "json"), ("Report (.pdf)", "pdf")]
    ]
    for fmt in ("xlsx", "csv", "json"):
        assert f'href="http://testserver/studies/{study_id}/export.{fmt}"' in page.text
    # The PDF is made in the background, with its progress shown (tests/routes/exchange/
    # test_report_jobs.py); /export.pdf still answers for scripts.
    assert f'hx-post="http://testserver/studies/{study_id}/report-jobs"' in page.text
    assert 'href="http://testserver/schema/study-v2.json"' in page.text


@pytest.mark.parametrize(("fmt", "media_type", "magic"), [
    ("xlsx", "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet", b"PK"),
    ("csv", "text/csv; charset=utf-8", b"\xef\xbb\xbfScenario,Node,"),
    ("json", "application/json", b'{"format":"tallyroom-study"'),
    ("pdf", "application/pdf", b"%PDF-"),
])  # fmt: skip
def test_each_download_is_an_attachment_of_its_type(
    client: TestClient, small_study: Study, fmt: str, media_type: str, magic: bytes
) -> None:
    response = client.get(f"/studies/{small_study.id}/export.{fmt}")
    assert response.status_code == 200
    assert response.headers["content-type"] == media_type
    assert response.headers["content-disposition"] == (
        f'attachment; filename="tallyroom-{small_study.id}-export-check-invented.{fmt}"'
    )
    assert response.content.startswith(magic)


def test_the_downloaded_workbook_holds_the_computed_numbers(
    client: TestClient, small_study: Study
) -> None:
    content = client.get(f"/studies/{small_study.id}/export.xlsx").content
    sheet = load_workbook(io.BytesIO(content))["Scenarios"]
    header = [c.value for c in sheet[1]]
    row = dict(zip(header, [c.value for c in sheet[2]], strict=True))
    assert row["Mitigated frequency (/yr)"] == pytest.approx(1e-3, rel=1e-15)  # 0.1 x 0.01
    assert row["Gap (orders of magnitude)"] == pytest.approx(2.0, rel=1e-15)  # 1e-3 / 1e-5
    assert row["SIL target"].startswith("SIL 1")


def test_the_downloaded_json_is_the_study_file(
    client: TestClient, session: Session, small_study: Study
) -> None:
    response = client.get(f"/studies/{small_study.id}/export.json")
    expected = {**export_study(session, small_study.id or 0), "cautions": CAUTIONS}
    downloaded = response.json()
    figures = downloaded.pop("computed_figures")  # read-only figures, beside the inputs
    assert downloaded == json.loads(json.dumps(expected))
    assert [row["ref"] for row in figures] == [f"S{i}" for i in range(1, len(figures) + 1)]


@pytest.mark.parametrize("path", ["export", "export.xlsx", "export.csv", "export.json",
                                  "export.pdf"])
def test_an_unknown_study_has_no_exports(client: TestClient, session: Session, path: str) -> None:
    response = client.get(f"/studies/999/{path}")
    assert response.status_code == 404
    assert "There is no study 999." in response.text


def test_the_schema_document_is_served(client: TestClient, session: Session) -> None:
    response = client.get("/schema/study-v2.json")
    assert response.status_code == 200
    assert response.headers["content-type"] == "application/schema+json"
    assert response.json() == study_json_schema()
