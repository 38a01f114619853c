"""The PDF report: it renders, every page shows something, and it says what it must."""

import os
import shutil
import subprocess
from datetime import UTC, datetime
from pathlib import Path

import pytest
from PIL import Image
from sqlmodel import Session

from app.db.models import Study
from app.routes.rendering import CAUTIONS, templates
from app.services.exchange.exports import ExportFormat, build_export
from app.services.exchange.report import build_report, report_html
from app.services.exchange.report_scenarios import Words, printed_part
from app.services.exchange.study_file import export_study
from app.services.study.tree import load_study_tree
from tests.samples import FORMULA_TEXTS, SCRIPTS, make_hostile_study

WHEN = datetime(2026, 11, 12, 15, 30, tzinfo=UTC)


@pytest.fixture
def poppler() -> None:
    """pdftoppm and pdftotext (poppler-utils); CI installs them, so there a gap is a failure."""
    if shutil.which("pdftoppm") and shutil.which("pdftotext"):
        return
    if os.environ.get("TALLYROOM_REQUIRE_BROWSER") == "1":
        pytest.fail("poppler-utils (pdftoppm, pdftotext) is required here but not installed")
    pytest.skip("poppler-utils (pdftoppm, pdftotext) is not installed: PDF pages not checked")


def words(text: str) -> str:
    """Text with every run of whitespace as one space (PDF text breaks lines anywhere)."""
    return " ".join(text.split())


def write_pdf(session: Session, study: Study, folder: Path) -> Path:
    """Export the study's report into `folder` as report.pdf."""
    export = build_export(session=session, study_id=study.id or 0,
                          export_format=ExportFormat.PDF, env=templates.env)
    assert export.content.startswith(b"%PDF-")
    path = folder / "report.pdf"
    path.write_bytes(export.content)
    return path


def page_texts(pdf: Path, layout: bool = True) -> list[str]:
    """The text of each page (pdftotext separates pages with a form feed); without `layout`
    in reading order, so a table cell's wrapped lines stay together."""
    options = ["-layout"] if layout else []
    text = subprocess.run(["pdftotext", *options, str(pdf), "-"], check=True,
                          capture_output=True, text=True).stdout
    return [words(page) for page in text.split("\f") if page.strip()]


def page_images(pdf: Path) -> list[Path]:
    """Each page as a PNG at 50 dpi, beside the PDF."""
    subprocess.run(["pdftoppm", "-png", "-r", "50", str(pdf), str(pdf.parent / "page")],
                   check=True)
    return sorted(pdf.parent.glob("page-*.png"))


def test_the_demo_report_renders_every_page_with_the_title_and_the_cautions(
    session: Session, demo_study: Study, tmp_path: Path, poppler: None
) -> None:
    pdf = write_pdf(session, demo_study, tmp_path)
    texts, images = page_texts(pdf), page_images(pdf)
    assert len(images) == len(texts) >= 6
    for image in images:
        darkest, _ = Image.open(image).convert("L").getextrema()
        assert darkest < 128, f"{image.name} is blank"
    assert demo_study.title in texts[0] and words(CAUTIONS) in texts[0]
    footer = "Cautions. Tallyroom is decision support for a competent review team."
    assert all(footer in text for text in texts), "a page lacks the cautions footer"
    assert all(f"page {n} of {len(texts)}" in text for n, text in enumerate(texts, 1))
    assert f"Revision {demo_study.revision_label}" in texts[1]
    section_pages = {title: next(i for i, t in enumerate(texts) if title in t)
                     for title in ("1 · Scope and risk criteria", "2 · Attendance",
                                   "3 · Scenarios by node", "4 · Risk picture", "5 · Actions")}
    assert list(section_pages.values()) == sorted(section_pages.values())


def test_the_report_draws_a_ladder_per_computed_scenario_and_the_risk_picture(
    session: Session, demo_study: Study
) -> None:
    tree = load_study_tree(session, demo_study.id or 0)
    data = export_study(session, demo_study.id or 0)
    report = build_report(tree, data, when=WHEN)
    html = report_html(report, env=templates.env)
    # The scenario pages are drawn from their words (report_pages.py), all nodes in one part.
    printed = printed_part(report, report.nodes, words=Words.of(templates.env),
                           continued=False, first=True)
    scenarios = [s for node in printed.nodes for s in node.scenarios]
    computed = [s for s in tree.scenario_branches() if s.outcome.result is not None]
    assert sum(s.ladder is not None for s in scenarios) == len(computed) >= 15
    assert html.count('<svg class="risk-matrix"') == 1
    assert html.count('<svg class="gap-bars"') == 1
    titles = [node.title for node in printed.nodes]
    for node_branch in tree.nodes:
        assert f"Node {node_branch.node.number} · {node_branch.node.name}" in titles
    assert "2026-11-12 15:30 UTC" in html
    assert all(f"<td>{p['name']}</td>" in html for p in data["participants"])
    assert len(scenarios) == len(tree.scenario_branches())


def test_hostile_text_is_escaped_in_the_report_source_and_the_pdf_still_renders(
    session: Session, tmp_path: Path, poppler: None
) -> None:
    study = make_hostile_study(session)
    tree = load_study_tree(session, study.id or 0)
    html = report_html(build_report(tree, export_study(session, study.id or 0), when=WHEN),
                       env=templates.env)
    assert "<script>" not in html and "<b>bold</b>" not in html
    assert "&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt;&lt;b&gt;bold&lt;/b&gt;" in html
    assert FORMULA_TEXTS[0] in html  # the report shows text exactly as typed
    texts = page_texts(write_pdf(session, study, tmp_path))
    whole = " ".join(texts)
    assert "<script>alert('x')</script><b>bold</b>" in whole  # shown as text, not run
    # Text extraction keeps each script's letters (shaping may split Arabic ligatures, and
    # glyphs need an installed font to be seen: DejaVu covers Arabic, not Chinese or Devanagari).
    assert SCRIPTS["arabic"].split()[0] in whole
    assert SCRIPTS["chinese"] in whole and SCRIPTS["devanagari"] in whole
    assert all("page " in text for text in texts)


def test_the_demo_report_carries_every_basis_warning_and_added_function(
    session: Session, demo_study: Study, tmp_path: Path, poppler: None
) -> None:
    """pdftotext finds every step's basis, every warning's title and the added-function table;
    every page's footer says whose record it is."""
    from app.services.exchange.report import build_report
    from app.services.risk.ipl_checks import scenario_warnings

    tree = load_study_tree(session, demo_study.id or 0)
    pages = page_texts(write_pdf(session, demo_study, tmp_path), layout=False)
    text = " ".join(pages)
    # pdftotext joins a word wrapped after its hyphen without the hyphen: compare without them.
    joined = text.replace("-", "").replace("  ", " ")
    steps = [s for item in tree.scenario_branches() for s in item.steps]
    for step in steps:
        if step.basis.strip():
            assert words(step.basis).replace("-", "")[:60] in joined, step.basis
    # The worksheet's own titles (templates/risk/_warnings.html), the words a user knows.
    titles = templates.env.get_template("risk/_warnings.html").module.check_titles  # type: ignore[attr-defined]
    raised = {w.rule for item in tree.scenario_branches() for w in scenario_warnings(item)}
    assert raised, "the demo raises IPL warnings"
    for rule in raised:
        assert titles.get(rule, rule.replace("_", " ").capitalize()) in text
    assert "6 · Added safety functions" in text and "SCENARIO SERVED" not in text
    assert "Scenario served Required SIL Mode" in text
    report = build_report(tree, export_study(session, demo_study.id or 0), when=WHEN)
    assert report.functions
    for function in report.functions:
        assert function.scenario[:20] in text
    assert "EXPECTE D" not in text and "Expected RRF" in text
    for page in pages:
        assert "Draft A: working copy, not signed" in page
