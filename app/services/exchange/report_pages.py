"""The report's scenario pages drawn with fpdf2: one part of `PrintedScenario` records into a PDF
file, joined afterwards with the front and back matter WeasyPrint lays out (report_parts.py).

Why not WeasyPrint here too: it costs 0.1-0.25 CPU seconds per scenario whatever the markup
(measured, DEVELOPERS.md "PDF report"), two minutes of two cores for 1,000 scenarios; these
pages set their text themselves (report_type.py) and draw the ladder directly. The page has
the report's look: A4, the same margins, DejaVu Sans, the running title and revision on top,
the signature and cautions at the foot, and room for the "page n of N" stamped after joining.
"""

from pathlib import Path
from typing import Any

from fpdf import FPDF

from app.services.exchange.report_printed import (
    PrintedNode,
    PrintedPart,
    PrintedScenario,
    PrintedStep,
    Run,
)
from app.services.exchange.report_type import INK, Line, TypeSetter, add_fonts
from app.services.worksheet.ladder import LadderBand, LadderView

DARK, RULE, ACCENT = (38, 50, 63), (216, 212, 204), (181, 84, 27)
STATE_COLOURS = {"meets": (31, 111, 74), "short": (155, 44, 31), "unknown": (107, 91, 0)}
PAGE_WIDTH, PAGE_HEIGHT, LEFT, RIGHT, TOP, BOTTOM = 210.0, 297.0, 14.0, 14.0, 16.0, 34.0
TEXT_WIDTH = PAGE_WIDTH - LEFT - RIGHT
FOOT_WIDTH = 150.0
LADDER_WIDTH, LADDER_GAP = 70.0, 3.0
LINE = 3.6  # mm per line of 8.6 pt text
ASCENT = 0.78  # of a line, from its top to the baseline
KEEP_WITH_HEADING = 38.0
"""A scenario starts on a new page unless its heading, cause and first steps fit (mm)."""
CELL_PAD_X, CELL_PAD_Y = 1.2, 0.5
STEP_COLUMNS = tuple(TEXT_WIDTH * share / 100 for share in (17, 48, 13, 11, 11))
STEP_HEADINGS = ("Step", "Description, basis and typical value", "As entered", "Value",
                 "Credited")


class ScenarioPages(FPDF):
    """A4 pages with the report's running header and footer, and a cursor `y` (mm from the
    top) that moves down as text is set and starts a new page when the text would not fit."""

    def __init__(self, part: PrintedPart) -> None:
        super().__init__(unit="mm", format="A4")
        self.part = part
        self.set_margins(LEFT, TOP, RIGHT)
        self.set_auto_page_break(False)
        add_fonts(self, cjk=part.needs_cjk)
        self.type = TypeSetter(self, cjk=part.needs_cjk)
        self.set_title(part.document_title)
        self.set_creator("Tallyroom")
        self._foot: list[Line] | None = None
        self.y_at = TOP

    def header(self) -> None:
        """The study's title on the left (its first line, when too long for the room the
        revision leaves) and its revision on the right, small and grey."""
        revision: Line = [("running", self.part.revision)]
        room = TEXT_WIDTH - self.type.line_width(revision) - 6
        title = self.type.wrap((("running", self.part.study_title),), room)
        shown = title[0] + ([("running", " …")] if len(title) > 1 else [])
        self.type.draw_line(shown, LEFT, 11)
        self.type.draw_line(revision, LEFT, 11, align="R", width=TEXT_WIDTH)

    def footer(self) -> None:
        """The signature and the cautions on every page, above the page number's place."""
        top = PAGE_HEIGHT - BOTTOM + 1
        self.set_draw_color(*ACCENT)
        self.set_line_width(0.21)
        self.line(LEFT, top, LEFT + FOOT_WIDTH, top)
        if self._foot is None:
            self._foot = self.type.wrap([("foot-B", self.part.signature + "\n"),
                                         ("foot-B", "Cautions. "),
                                         ("foot", self.part.cautions)], FOOT_WIDTH)
        for number, line in enumerate(self._foot):
            self.type.draw_line(line, LEFT, top + 3.8 + number * 2.8)

    def new_page(self) -> None:
        """A fresh page, the cursor at its top."""
        self.add_page()
        self.y_at = TOP

    def room(self, height: float) -> None:
        """Start a new page unless `height` mm still fit on this one."""
        if self.y_at + height > PAGE_HEIGHT - BOTTOM:
            self.new_page()

    def lines(self, lines: list[Line], *, x: float = LEFT, height: float = LINE) -> None:
        """Set lines at the cursor, going on on a new page when the page is full."""
        for line in lines:
            self.room(height)
            self.type.draw_line(line, x, self.y_at + ASCENT * height)
            self.y_at += height

    def runs(self, runs: tuple[Run, ...], *, width: float = TEXT_WIDTH,
             height: float = LINE) -> None:
        """Running text in several styles, wrapped to `width` mm from the left margin."""
        self.lines(self.type.wrap(runs, width), height=height)

    def rule(self, colour: tuple[int, int, int], width: float, length: float = TEXT_WIDTH,
             x: float = LEFT) -> None:
        """A horizontal line at the cursor."""
        self.set_draw_color(*colour)
        self.set_line_width(width)
        self.line(x, self.y_at, x + length, self.y_at)


def write_scenario_pages(part: PrintedPart, target: Path) -> int:
    """Draw the part's scenario pages into `target`; the number of pages."""
    pdf = ScenarioPages(part)
    pdf.new_page()
    if part.section_title:
        pdf.lines([[("h2", part.section_title)]], height=6)
        pdf.y_at += 1
        pdf.rule(DARK, 0.42)
        pdf.y_at += 3
    for node in part.nodes:
        _node(pdf, node)
    pdf.output(str(target))
    return pdf.page_no()


def _node(pdf: ScenarioPages, node: PrintedNode) -> None:
    pdf.room(KEEP_WITH_HEADING + 14)
    pdf.y_at += 2
    pdf.runs((("h3", node.title),), height=5)
    for number, line in enumerate(node.lines):
        pdf.runs((("soft" if number == 0 else "muted", line),))
    pdf.y_at += 2
    for scenario in node.scenarios:
        _scenario(pdf, scenario)


def _scenario(pdf: ScenarioPages, scenario: PrintedScenario) -> None:
    pdf.room(KEEP_WITH_HEADING)
    pdf.rule(STATE_COLOURS[scenario.state], 0.8)
    pdf.y_at += 1.2
    pdf.runs(scenario.heading, height=4.4)
    pdf.runs(scenario.cause_consequence)
    _steps(pdf, scenario.steps)
    if scenario.warnings:
        pdf.runs(scenario.warnings)
    _figures_and_ladder(pdf, scenario)
    if scenario.safeguards:
        pdf.runs((("muted", scenario.safeguards),))
    pdf.y_at += 3.5


def _steps(pdf: ScenarioPages, steps: tuple[PrintedStep, ...]) -> None:
    """The steps as a table: a heading row (again on each new page), a rule under each row."""
    _step_headings(pdf)
    for step in steps:
        plain, number = ("", "mono") if step.is_credited else ("I", "mono-I")
        cells = [pdf.type.wrap(((style, text),), width - 2 * CELL_PAD_X)
                 for style, text, width in zip(
                     (plain, plain, plain, number, plain),
                     (step.kind, step.description, step.typed, step.value, step.credited),
                     STEP_COLUMNS, strict=True)]
        height = max(len(lines) for lines in cells) * LINE + 2 * CELL_PAD_Y
        if pdf.y_at + height > PAGE_HEIGHT - BOTTOM:
            pdf.new_page()
            _step_headings(pdf)
        _row(pdf, cells, aligns="LLLRL")
        pdf.y_at += height
        pdf.rule(RULE, 0.18)
    pdf.y_at += 1


def _step_headings(pdf: ScenarioPages) -> None:
    cells = [pdf.type.wrap((("th", text),), width - 2 * CELL_PAD_X)
             for text, width in zip(STEP_HEADINGS, STEP_COLUMNS, strict=True)]
    height = max(len(lines) for lines in cells) * 3.0 + 2 * CELL_PAD_Y
    pdf.room(height + 2 * LINE)
    _row(pdf, cells, aligns="LLLRL", line=3.0)
    pdf.y_at += height
    pdf.rule(INK, 0.35)


def _row(pdf: ScenarioPages, cells: list[list[Line]], *, aligns: str,
         line: float = LINE) -> None:
    x = LEFT
    for lines, width, align in zip(cells, STEP_COLUMNS, aligns, strict=True):
        for number, set_line in enumerate(lines):
            pdf.type.draw_line(set_line, x + CELL_PAD_X,
                               pdf.y_at + CELL_PAD_Y + (number + ASCENT) * line,
                               align=align, width=width - 2 * CELL_PAD_X)
        x += width


def _figures_and_ladder(pdf: ScenarioPages, scenario: PrintedScenario) -> None:
    ladder = scenario.ladder
    if ladder is None:
        pdf.runs(scenario.figures)
        return
    height = LADDER_WIDTH * ladder.height / ladder.width
    pdf.room(height + 1)
    top = pdf.y_at
    draw_ladder(pdf, ladder, scenario.band, PAGE_WIDTH - RIGHT - LADDER_WIDTH, top)
    pdf.runs(scenario.figures, width=TEXT_WIDTH - LADDER_WIDTH - LADDER_GAP, height=3.4)
    pdf.y_at = max(pdf.y_at, top + height) + 1


def draw_ladder(pdf: ScenarioPages, ladder: LadderView, band: LadderBand | None,
                left: float, top: float) -> None:
    """The frequency ladder as the worksheet draws it (worksheet/_ladder.html), in mm."""
    scale = LADDER_WIDTH / ladder.width

    def at(x: float, y: float) -> tuple[float, float]:
        return left + x * scale, top + y * scale

    colour = STATE_COLOURS["meets" if ladder.meets_target else "short"]
    pdf.set_draw_color(*RULE)
    pdf.set_line_width(0.2)
    pdf.set_fill_color(255, 255, 255)
    pdf.rect(left, top, LADDER_WIDTH, ladder.height * scale, style="D")
    _label(pdf, at(4, 12), "per year", 10 * scale, (61, 70, 81))
    _label(pdf, at(ladder.width - 6, 13), ladder.gap_label, 11 * scale, colour, "R", "B")
    for decade in ladder.decades:
        _line(pdf, at(ladder.plot_left, decade.y), at(ladder.plot_right, decade.y),
              (222, 218, 210), 1 * scale)
        _label(pdf, at(ladder.plot_left - 6, decade.y + 4), decade.label, 11 * scale,
               (61, 70, 81), "R")
    _line(pdf, at(ladder.plot_left, ladder.target_y), at(ladder.gap_x, ladder.target_y),
          ACCENT, 2 * scale, dash=(6 * scale, 4 * scale))
    _label(pdf, at(ladder.gap_x + 6, ladder.target_label_y + 4), ladder.target_label,
           11 * scale, (138, 61, 16))
    for drop in ladder.drops:
        _line(pdf, at(drop.x, drop.y_from), at(drop.x, drop.y_to), (26, 95, 180),
              1.5 * scale, dash=(3 * scale, 2 * scale))
    for mark in ladder.marks:
        _line(pdf, at(mark.x_start, mark.y), at(mark.x_end, mark.y), (26, 95, 180), 3 * scale)
        _dot(pdf, at(mark.x_mid, mark.y), 3.5 * scale, (26, 95, 180))
        _label(pdf, at(mark.x_mid, mark.y - 6), mark.code, 10 * scale, INK, "C")
    mitigated = ladder.mitigated
    _line(pdf, at(mitigated.x_end, mitigated.y), at(ladder.gap_x, mitigated.y), colour,
          1.5 * scale)
    _line(pdf, at(ladder.gap_x, mitigated.y), at(ladder.gap_x, ladder.target_y), colour,
          3 * scale)
    if band is not None:
        _band(pdf, band, at, scale)
    _dot(pdf, at(ladder.gap_x, mitigated.y), 5.5 * scale, colour)
    _label(pdf, at(ladder.gap_x + 10, ladder.mitigated_label_y + 4), mitigated.frequency_text,
           11 * scale, colour, "L", "B")


def _band(pdf: ScenarioPages, band: LadderBand, at: Any, scale: float) -> None:
    purple = (107, 79, 160)
    x, y = at(band.x - 4, band.y_p95)
    height = max(band.y_p05 - band.y_p95, 1) * scale
    with pdf.local_context(fill_opacity=0.25):
        pdf.set_fill_color(*purple)
        pdf.rect(x, y, 8 * scale, height, style="F")
    pdf.set_draw_color(*purple)
    pdf.set_line_width(1 * scale)
    pdf.rect(x, y, 8 * scale, height, style="D")
    for y_at, clipped in ((band.y_p95, band.clipped_top), (band.y_p05, band.clipped_bottom)):
        _line(pdf, at(band.x - 6, y_at), at(band.x + 6, y_at), purple,
              (1 if clipped else 2) * scale)


def _line(pdf: ScenarioPages, start: tuple[float, float], end: tuple[float, float],
          colour: tuple[int, int, int], width: float,
          dash: tuple[float, float] | None = None) -> None:
    pdf.set_draw_color(*colour)
    pdf.set_line_width(width)
    if dash:
        pdf.set_dash_pattern(dash=dash[0], gap=dash[1])
    pdf.line(*start, *end)
    if dash:
        pdf.set_dash_pattern()


def _dot(pdf: ScenarioPages, centre: tuple[float, float], radius: float,
         colour: tuple[int, int, int]) -> None:
    pdf.set_fill_color(*colour)
    pdf.circle(centre[0], centre[1], radius, style="F")


def _label(pdf: ScenarioPages, baseline: tuple[float, float], text: str, size_mm: float,
           colour: tuple[int, int, int], align: str = "L", style: str = "") -> None:
    """Text whose baseline starts (L), is centred (C) or ends (R) at the point, as SVG's
    text-anchor places it."""
    pdf.set_font("DejaVu", style, size_mm * 72 / 25.4)
    pdf.set_text_color(*colour)
    width = pdf.get_string_width(text)
    x = baseline[0] - {"L": 0.0, "C": width / 2, "R": width}[align]
    pdf.text(x, baseline[1], text)
