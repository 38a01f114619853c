"""The PDF report's section on estimate rounds and the workbook's sheets of rounds, estimates
and the team word scale, from the demo study's finished rounds.

External checks: geometric mean against scipy.stats.gmean, median against numpy.median, the
spread in orders of magnitude by hand (log10 of 0.1 / 0.003 = 1.52).
"""

import io
import math
import shutil
import subprocess
from datetime import UTC, datetime
from pathlib import Path

import numpy
import pytest
from openpyxl import load_workbook
from scipy.stats import gmean
from sqlmodel import Session, col, select

from app.db.models import EstimateRound, Study
from app.likelihood.numbers import format_number
from app.routes.rendering import CAUTIONS, templates
from app.services.estimates import rounds
from app.services.exchange.exports import ExportFormat, build_export
from app.services.exchange.report import build_report, report_html
from app.services.exchange.report_source import revision_report_html
from app.services.exchange.study_file import export_study
from app.services.record.revisions import freeze_revision
from app.services.study.tree import load_study_tree

WHEN = datetime(2026, 11, 12, 15, 30, tzinfo=UTC)
# The demo's nitrogen-outage ignition round 2 (invented): six estimates, one dissent.
WIDE_ROUND = {"A. Okafor": 3e-3, "Wren Halvorsen-Pike": 1e-2, "Desmond Achterberg": 0.1,
              "Marisol Penhallow": 1e-2, "Teodor Brannigan": 1e-2, "Ilse Marrow-Quaye": 3e-2}


def _html(session: Session, study: Study) -> str:
    tree = load_study_tree(session, study.id or 0)
    data = export_study(session, study.id or 0)
    return report_html(build_report(tree, data, when=WHEN), env=templates.env)


def test_the_report_lists_each_round_with_names_figures_agreement_and_dissent(
        session: Session, demo_study: Study) -> None:
    html = _html(session, demo_study)
    section = html[html.index('id="estimate-rounds"'):]
    assert "8 · Estimate rounds and the team word scale" in section
    assert section.count('class="round-record"') == 9
    values = list(WIDE_ROUND.values())
    block = section[section.index("Ignition source in the headspace"):]
    block = block[block.index("round 2"):]
    block = block[:block.index('class="round-record"')]
    assert all(f"<td>{name}</td>" in block for name in WIDE_ROUND)
    assert format_number(float(gmean(values))) in block  # 1.4e-2
    assert format_number(float(numpy.median(values))) in block  # 1.0e-2
    assert f"{math.log10(0.1 / 0.003):.1f} orders of magnitude ▲ discussed" in block  # 1.5
    assert "<strong>Desmond Achterberg dissents</strong>: static discharge" in block
    assert "1.0e-2 (median)" in block
    words = section[section.index('id="word-scale-table"'):]
    assert "<td>rare</td><td>probability</td><td class=\"num\">1.0e-3</td>" in words


def test_names_the_facilitator_hid_are_numbered_in_the_report(
        session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    for found in session.exec(select(EstimateRound).where(
            EstimateRound.study_id == study_id, col(EstimateRound.step_id).is_not(None))):
        rounds.set_names_shown(session=session, study_id=study_id, round_id=found.id or 0,
                               shown=False)
    section = _html(session, demo_study).split('id="estimate-rounds"')[1]
    step_rounds = section.split("Word &#39;")[0]
    assert "<td>participant 1</td>" in step_rounds and "<td>A. Okafor</td>" not in step_rounds


def test_a_frozen_revisions_report_shows_the_rounds_it_was_frozen_with(
        session: Session, demo_study: Study) -> None:
    study_id = demo_study.id or 0
    revision = freeze_revision(session=session, study_id=study_id, frozen_by="T",
                               values={"label": "Rev A", "signed_off_by": "I. M."})
    html = revision_report_html(session, study_id, revision.id or 0, env=templates.env,
                                when=WHEN)
    assert html.count('class="round-record"') == 9
    assert "Desmond Achterberg dissents" in html


def test_the_workbook_has_sheets_of_rounds_estimates_and_the_word_scale(
        session: Session, demo_study: Study) -> None:
    export = build_export(session=session, study_id=demo_study.id or 0,
                          export_format=ExportFormat.XLSX, env=templates.env)
    book = load_workbook(io.BytesIO(export.content))
    cover = [row[0] for row in book["About"].iter_rows(values_only=True)]
    assert {"Sheet: Estimate rounds", "Sheet: Estimates", "Sheet: Word scale"} <= set(cover)
    assert CAUTIONS in [row[1] for row in book["About"].iter_rows(values_only=True)]
    sheet = list(book["Estimate rounds"].iter_rows(values_only=True))
    header = list(sheet[0])
    wide = next(row for row in sheet[1:] if row[header.index("Dissents")])
    assert wide[header.index("Round")] == 2
    assert wide[header.index("Geometric mean")] == pytest.approx(gmean(list(WIDE_ROUND.values())))
    assert wide[header.index("Median")] == pytest.approx(numpy.median(list(WIDE_ROUND.values())))
    assert wide[header.index("Spread (orders of magnitude)")] == pytest.approx(
        math.log10(0.1 / 0.003))
    assert wide[header.index("Agreed value")] == pytest.approx(1e-2)
    assert wide[header.index("Scenario")] == "2.3.1"  # node 2, 3rd deviation, 1st scenario
    estimates = list(book["Estimates"].iter_rows(values_only=True))
    assert len(estimates) - 1 == 5 + 6 + 6 + 5 + 5 + 4 * 6  # four steps' five rounds, 4 words
    words = list(book["Word scale"].iter_rows(values_only=True))
    assert words[1:] == [("rare", "probability", 1e-3), ("unlikely", "probability", 1e-2),
                         ("possible", "probability", 0.1), ("likely", "probability", 0.5)]


@pytest.mark.skipif(shutil.which("pdftotext") is None, reason="poppler-utils not installed")
def test_the_pdf_prints_the_rounds_section_under_the_cautions_footer(
        session: Session, demo_study: Study, tmp_path: Path) -> None:
    export = build_export(session=session, study_id=demo_study.id or 0,
                          export_format=ExportFormat.PDF, env=templates.env)
    path = tmp_path / "report.pdf"
    path.write_bytes(export.content)
    text = subprocess.run(["pdftotext", str(path), "-"], check=True, capture_output=True,
                          text=True).stdout
    pages = [" ".join(page.split()) for page in text.split("\f") if page.strip()]
    rounds_pages = [p for p in pages if "Estimate rounds and the team word scale" in p]
    assert len(rounds_pages) >= 2  # the contents line and the section itself
    assert all("Cautions." in page for page in rounds_pages)
    assert any("Desmond Achterberg dissents" in page for page in pages)
