"""The scenario pages (fpdf2): text set by report_type.py stays within its width, keeps every
word in order and breaks only between words (a word wider than a line is cut); a layout process
ends when the process that started it dies; the report's gap chart fits its page."""

import os
import signal
import subprocess
import sys
import time
from datetime import UTC, datetime
from pathlib import Path

from fpdf import FPDF
from hypothesis import given, settings
from hypothesis import strategies as st
from sqlmodel import Session

from app.routes.rendering import templates
from app.services.exchange.report import GAP_BARS_SHOWN, build_report, report_html
from app.services.exchange.report_type import TypeSetter, add_fonts
from app.services.exchange.study_file import export_study
from app.services.exchange.study_import import import_study_text
from app.services.risk.picture import build_risk_picture
from app.services.study.tree import load_study_tree
from bench.generate import study_text

WHEN = datetime(2026, 11, 12, 15, 30, tzinfo=UTC)


def _setter() -> TypeSetter:
    pdf = FPDF(unit="mm", format="A4")
    add_fonts(pdf, cjk=False)
    pdf.add_page()
    return TypeSetter(pdf, cjk=False)


SETTER = _setter()
WORD = st.text(alphabet="abcdefghijklmnopqrstuvwxyzABC0123456789-·\N{MULTIPLICATION SIGN}é",
               min_size=1, max_size=30)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(["", "B", "key", "mono"]), st.lists(WORD, max_size=12)),
                min_size=1, max_size=5),
       st.floats(min_value=15, max_value=180))
def test_wrapped_lines_fit_their_width_and_keep_every_word_in_order(
    runs: list[tuple[str, list[str]]], width: float
) -> None:
    styled = [(style, " ".join(words) + " ") for style, words in runs]
    lines = SETTER.wrap(styled, width)
    for line in lines:
        # Measured afresh with fpdf2's own width, not the setter's kept one.
        measured = 0.0
        for style, text in line:
            SETTER.use(style)
            measured += SETTER.pdf.get_string_width(text, normalized=True)
        assert measured <= width + 1e-6
    written = "".join(text for line in lines for _style, text in line)
    assert written.replace(" ", "") == "".join(t for _s, t in styled).replace(" ", "")


def test_a_line_breaks_between_words_and_a_newline_starts_a_new_one() -> None:
    one_word = SETTER.width("", "consequence")
    lines = SETTER.wrap([("", "consequence consequence\nshort")], one_word * 1.5)
    assert [[text for _s, text in line] for line in lines] == [
        ["consequence"], ["consequence"], ["short"]]


def test_a_word_wider_than_the_line_is_cut_between_its_characters() -> None:
    word = "x" * 80
    lines = SETTER.wrap([("", word)], SETTER.width("", "x" * 30) + 0.01)
    assert ["".join(t for _s, t in line) for line in lines] == ["x" * 30, "x" * 30, "x" * 20]


CHILD = """
import subprocess, sys, time
grandchild = subprocess.Popen([sys.executable, "-c", '''
import time
from app.services.exchange.report_layout import exit_with_parent
exit_with_parent(0.05)
print("watching", flush=True)
time.sleep(60)
'''], stdout=sys.stdout)
print(grandchild.pid, flush=True)
time.sleep(60)
"""


def test_a_layout_process_exits_soon_after_its_parent_is_killed() -> None:
    with subprocess.Popen([sys.executable, "-c", CHILD], stdout=subprocess.PIPE, text=True,
                          cwd=Path(__file__).resolve().parents[3]) as parent:
        assert parent.stdout is not None
        grandchild = int(parent.stdout.readline())
        assert parent.stdout.readline().strip() == "watching"
        os.kill(parent.pid, signal.SIGKILL)
        parent.wait()
    deadline = time.monotonic() + 10
    while time.monotonic() < deadline and _alive(grandchild):
        time.sleep(0.05)
    assert not _alive(grandchild), "the layout process outlived its parent"


def _alive(pid: int) -> bool:
    """Whether the process runs (a zombie left for init to reap counts as ended)."""
    try:
        state = Path(f"/proc/{pid}/stat").read_text().split(") ")[1][0]
    except (OSError, IndexError):
        return False
    return state != "Z"


def test_the_reports_gap_chart_shows_the_50_largest_gaps_on_the_whole_studys_axis(
    session: Session
) -> None:
    """A chart of every bar cannot break across pages (it was cut off at about 54); the report
    draws the GAP_BARS_SHOWN largest and says how many scenarios there are."""
    study = import_study_text(session, study_text(120))
    tree = load_study_tree(session, study.id or 0)
    report = build_report(tree, export_study(session, study.id or 0), when=WHEN)
    whole = build_risk_picture(tree)
    assert len(whole.ranked) > GAP_BARS_SHOWN == 50
    shown = report.picture.gap_bars
    assert len(shown.bars) == GAP_BARS_SHOWN
    # The largest gaps, largest first, as the screen's chart draws them (same positions).
    assert [b.value_text for b in shown.bars] == [
        b.value_text for b in whole.gap_bars.bars[:GAP_BARS_SHOWN]]
    assert [t.text for t in shown.ticks] == [t.text for t in whole.gap_bars.ticks]
    assert [b.x for b in shown.bars] == [b.x for b in whole.gap_bars.bars[:GAP_BARS_SHOWN]]
    html = report_html(report, env=templates.env)
    assert (f"The 50 largest gaps of the {len(whole.ranked)} computed scenarios" in html)
