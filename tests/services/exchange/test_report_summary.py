"""The summary report stays short at any study size: a 1,000-scenario study gives a few pages,
every list capped with the count of the rest, and it lists the largest gaps first."""

import math
import re
import shutil
import subprocess
import time
from datetime import UTC, datetime
from pathlib import Path

import pytest
from sqlmodel import Session

from app.routes.rendering import CAUTIONS, templates
from app.services.exchange.export_tables import scenario_refs
from app.services.exchange.report import Signature, html_to_pdf
from app.services.exchange.report_source import live_report_html
from app.services.exchange.report_summary import (
    SUMMARY_ROWS,
    ReportKind,
    build_summary,
    summary_html,
)
from app.services.exchange.study_file import export_study
from app.services.exchange.study_import import import_study_text
from app.services.study.tree import load_study_tree
from bench.generate import study_text

WHEN = datetime(2026, 11, 12, 15, 30, tzinfo=UTC)
SCENARIOS = 1_000
MAX_SUMMARY_PAGES = 12
"""Cover, criteria, matrix and category counts, three capped lists of 50 rows: about ten
pages whatever the size (common practice, no source: a summary a meeting can read)."""


def _page_count(pdf: bytes, folder: Path) -> int:
    path = folder / "summary.pdf"
    path.write_bytes(pdf)
    info = subprocess.run(["pdfinfo", str(path)], check=True, capture_output=True,
                          text=True).stdout
    match = re.search(r"^Pages:\s+(\d+)$", info, re.MULTILINE)
    assert match is not None, info
    return int(match.group(1))


@pytest.mark.skipif(shutil.which("pdfinfo") is None, reason="poppler-utils not installed")
def test_a_1000_scenario_studys_summary_is_a_few_pages_with_the_cautions(
    session: Session, tmp_path: Path
) -> None:
    study = import_study_text(session, study_text(SCENARIOS))
    started = time.perf_counter()
    html = live_report_html(session, study.id or 0, env=templates.env, when=WHEN,
                            kind=ReportKind.SUMMARY)
    pdf = html_to_pdf(html)
    seconds = time.perf_counter() - started
    pages = _page_count(pdf, tmp_path)
    print(f"summary of {SCENARIOS} scenarios: {pages} pages in {seconds:.1f} s")
    assert 1 < pages <= MAX_SUMMARY_PAGES
    assert seconds < 30  # issue 14: the full report's own budget at this size
    assert html.count(CAUTIONS.split(".")[0]) >= 2  # cover and every page's footer


def test_every_list_is_capped_and_says_how_many_more_largest_gap_first(
    session: Session
) -> None:
    study = import_study_text(session, study_text(SCENARIOS))
    tree = load_study_tree(session, study.id or 0)
    summary = build_summary(tree, export_study(session, study.id or 0), when=WHEN,
                            signature=Signature("Draft A"))
    # Worked out here from each scenario's figures: short means mitigated above target, and
    # the gap is log10(mitigated / target) orders of magnitude.
    refs = scenario_refs(tree)
    gaps = sorted(((math.log10(r.mitigated_frequency / r.tolerable_frequency),
                    refs[item.scenario.id or 0])
                   for item in tree.scenario_branches()
                   if (r := item.outcome.result) is not None
                   and r.mitigated_frequency > r.tolerable_frequency),
                  key=lambda pair: -pair[0])
    assert len(gaps) > SUMMARY_ROWS, "the generated study has more short scenarios than the cap"
    assert len(summary.short) == SUMMARY_ROWS
    assert summary.short_more == len(gaps) - SUMMARY_ROWS
    listed = [entry.ranked.gap_orders for entry in summary.short]
    assert listed == pytest.approx([gap for gap, _ref in gaps[:SUMMARY_ROWS]])
    assert {e.ref for e in summary.short} <= {ref for _gap, ref in gaps}
    assert len(summary.functions) <= SUMMARY_ROWS
    rrfs = [f.required_rrf for f in summary.functions]
    assert rrfs == sorted(rrfs, reverse=True)
    html = summary_html(summary, env=templates.env)
    assert f"… and {summary.short_more} more scenarios short of target" in html
    assert html.count('<tr><td>') < 4 * SUMMARY_ROWS + 40  # bounded rows, not one per scenario
