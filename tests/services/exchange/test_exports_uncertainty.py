"""Every export carries each scenario's uncertainty: the CSV and the workbook as columns (the
Steps sheet with each step's EF and its source), the PDF report as a line per scenario, the
JSON study file as the inputs (typed EFs, study defaults) that give it.

External check: the figures against scipy.stats.lognorm (IE 0.1 /yr exact, an IPL at PFD 1e-3
with EF 30: median 1e-4 /yr, sigma = ln 30 / z95; target 1e-5 /yr).
"""

import csv
import io
import math
from typing import Any

import pytest
from jinja2 import Environment
from openpyxl import load_workbook
from pypdf import PdfReader
from scipy import stats
from sqlmodel import Session

from app.db.models import Study
from app.likelihood.numbers import format_number
from app.routes.rendering import templates
from app.services.exchange.exports import ExportFormat, build_export
from tests.factories import make_scenario_tree, make_step

ENV: Environment = templates.env
FROZEN = stats.lognorm(s=math.log(30) / stats.norm.ppf(0.95), scale=1e-4)  # scipy


@pytest.fixture
def study(session: Session) -> Study:
    scenario = make_scenario_tree(session)
    make_step(session, scenario, value=1e-3, error_factor=30.0, description="Trip")
    found = session.get(Study, scenario.study_id)
    assert found is not None
    return found


def _export(session: Session, study: Study, export_format: ExportFormat) -> bytes:
    return build_export(session=session, study_id=study.id or 0, export_format=export_format,
                        env=ENV).content


def test_the_csv_has_the_band_the_mean_and_p_meets(session: Session, study: Study) -> None:
    text = _export(session, study, ExportFormat.CSV).decode("utf-8-sig")
    row = next(csv.DictReader(io.StringIO(text)))
    # The CSV shows scientific columns as the screen does (two significant figures).
    assert row["Median (/yr, lognormal)"] == format_number(FROZEN.median())
    assert row["5th percentile (/yr)"] == format_number(FROZEN.ppf(0.05))
    assert row["95th percentile (/yr)"] == format_number(FROZEN.ppf(0.95))
    assert row["Mean (/yr)"] == format_number(FROZEN.mean())
    assert float(row["Scenario error factor"]) == pytest.approx(30.0)
    assert float(row["P(meets target)"]) == pytest.approx(FROZEN.cdf(1e-5), rel=1e-9)
    assert 0.05 < FROZEN.cdf(1e-5) < 0.95  # scipy: about 13 %, so the verdict is uncertain
    assert row["Verdict certainty"] == "uncertain (5 % < P < 95 %)"


def _records(book: Any, title: str) -> list[dict[str, Any]]:
    rows = list(book[title].iter_rows(values_only=True))
    return [dict(zip(rows[0], r, strict=True)) for r in rows[1:]]


def test_the_workbook_has_the_columns_and_each_steps_ef_source(session: Session,
                                                              study: Study) -> None:
    book = load_workbook(io.BytesIO(_export(session, study, ExportFormat.XLSX)))
    scenario = _records(book, "Scenarios")[0]
    assert scenario["P(meets target)"] == pytest.approx(FROZEN.cdf(1e-5), rel=1e-9)
    assert scenario["95th percentile (/yr)"] == pytest.approx(FROZEN.ppf(0.95), rel=1e-9)
    steps = _records(book, "Steps")
    assert [(s["Error factor (EF)"], s["EF source"]) for s in steps] == [
        (None, "no EF: taken as exact"), (30.0, "EF 30, typed")]


def test_the_pdf_report_shows_the_band_and_p_meets(session: Session, study: Study) -> None:
    """Read back from the PDF's scenario pages (pypdf's text extraction)."""
    pdf = PdfReader(io.BytesIO(_export(session, study, ExportFormat.PDF)))
    text = " ".join(" ".join((page.extract_text() or "").split()) for page in pdf.pages)
    assert "P(meets target)" in text
    assert "EF 30, typed" in text
