"""The report's scenario pages drawn with fpdf2: one part of `PrintedScenario` records into a PDF
file, joined afterwards with the front and back matter WeasyPrint lays out (report_parts.py).

Why not WeasyPrint here too: it costs 0.1-0.25 CPU seconds per scenario whatever the markup
(measured, DEVELOPERS.md "PDF report"), two minutes of two cores for 1,000 scenarios; fpdf2
places text lines and draws the ladder directly. The page has the report's look: A4, the same
margins, DejaVu Sans, the running title and revision on top, the signature and cautions at
the foot, and room for the "page n of N" stamped after joining.
"""

from pathlib import Path
from typing import Any

from fpdf import FPDF, FontFace
from fpdf.enums import TableBordersLayout, XPos, YPos

from app.services.exchange.report_printed import (
    PrintedNode,
    PrintedPart,
    PrintedScenario,
    Run,
)
from app.services.worksheet.ladder import LadderBand, LadderView

FONT_FOLDER = Path("/usr/share/fonts/truetype/dejavu")
CJK_FONT = Path("/usr/share/fonts/opentype/noto/NotoSansCJK-Regular.ttc")
"""Used only for the characters DejaVu lacks (Chinese, Japanese, Korean), when installed."""

INK, GREY, DARK = (29, 35, 43), (90, 100, 112), (38, 50, 63)
RULE, ACCENT = (216, 212, 204), (181, 84, 27)
STATE_COLOURS = {"meets": (31, 111, 74), "short": (155, 44, 31), "unknown": (107, 91, 0)}
PAGE_WIDTH, LEFT, RIGHT, TOP, BOTTOM = 210.0, 14.0, 14.0, 16.0, 34.0
TEXT_WIDTH = PAGE_WIDTH - LEFT - RIGHT
LADDER_WIDTH, LADDER_GAP = 70.0, 3.0
LINE = 3.6  # mm per line of 8.6 pt text (line height 1.2)
KEEP_WITH_HEADING = 38.0
"""A scenario starts on a new page unless its heading, cause and first steps fit (mm)."""
STEP_COLUMNS = (17, 48, 13, 11, 11)
STEP_HEADINGS = ("Step", "Description, basis and typical value", "As entered", "Value",
                 "Credited")


class ScenarioPages(FPDF):
    """A4 pages with the report's running header and footer."""

    def __init__(self, part: PrintedPart) -> None:
        super().__init__(unit="mm", format="A4")
        self.part = part
        self.set_margins(LEFT, TOP, RIGHT)
        self.set_auto_page_break(True, margin=BOTTOM)
        self.c_margin = 1.2
        for style, name in (("", "DejaVuSans"), ("B", "DejaVuSans-Bold"),
                            ("I", "DejaVuSans-Oblique")):
            self.add_font("DejaVu", style, FONT_FOLDER / f"{name}.ttf")
        self.add_font("DejaVuMono", "", FONT_FOLDER / "DejaVuSansMono.ttf")
        self.add_font("DejaVuMono", "I", FONT_FOLDER / "DejaVuSansMono-Oblique.ttf")
        if part.needs_cjk and CJK_FONT.exists():
            self.add_font("NotoCJK", "", CJK_FONT, collection_font_number=2)
            self.set_fallback_fonts(["NotoCJK"], exact_match=False)
        self.set_title(part.document_title)
        self.set_creator("Tallyroom")

    def header(self) -> None:
        """The study's title on the left and its revision on the right, small and grey."""
        self._font("", 7.5, GREY)
        self.set_xy(LEFT, 8)
        self.cell(TEXT_WIDTH / 2, 4, self.part.study_title)
        self.cell(TEXT_WIDTH / 2, 4, self.part.revision, align="R")
        self.set_xy(LEFT, TOP)

    def footer(self) -> None:
        """The signature and the cautions on every page, above the page number's place."""
        top = 297 - BOTTOM + 1
        self.set_draw_color(*ACCENT)
        self.set_line_width(0.21)
        self.line(LEFT, top, LEFT + 150, top)
        self.set_xy(LEFT, top + 1.5)
        self._font("", 6.6, (61, 70, 81))
        self.multi_cell(150, 2.8, self.part.signature, new_x=XPos.LMARGIN, new_y=YPos.NEXT,
                        padding=0)
        self._font("B", 6.6, (61, 70, 81))
        self.write(2.8, "Cautions. ")
        self._font("", 6.6, (61, 70, 81))
        self.set_right_margin(PAGE_WIDTH - LEFT - 150)
        self.write(2.8, self.part.cautions)
        self.set_right_margin(RIGHT)

    def _font(self, style: str, size: float, colour: tuple[int, int, int]) -> None:
        self.set_font("DejaVu", style, size)
        self.set_text_color(*colour)

    def runs(self, runs: tuple[Run, ...], height: float = LINE) -> None:
        """Running text in several styles, wrapped within the current margins."""
        for style, text in runs:
            if style.startswith("status-"):
                self._font("B", 9.5, STATE_COLOURS[style.removeprefix("status-")])
            elif style == "key":
                self._font("", 7, GREY)
            else:
                self._font(style, 8.6, INK)
            self.write(height, text)
        self.ln(height)


def write_scenario_pages(part: PrintedPart, target: Path) -> int:
    """Draw the part's scenario pages into `target`; the number of pages."""
    pdf = ScenarioPages(part)
    pdf.add_page()
    if part.section_title:
        _section_title(pdf, part.section_title)
    for node in part.nodes:
        _node(pdf, node)
    pdf.output(str(target))
    return pdf.page_no()


def _section_title(pdf: ScenarioPages, title: str) -> None:
    pdf._font("B", 13, INK)
    pdf.cell(TEXT_WIDTH, 7, title, new_x=XPos.LMARGIN, new_y=YPos.NEXT)
    pdf.set_draw_color(*DARK)
    pdf.set_line_width(0.42)
    pdf.line(LEFT, pdf.get_y(), LEFT + TEXT_WIDTH, pdf.get_y())
    pdf.ln(3)


def _node(pdf: ScenarioPages, node: PrintedNode) -> None:
    if pdf.will_page_break(KEEP_WITH_HEADING + 14):
        pdf.add_page()
    pdf.ln(2)
    pdf._font("B", 10.5, INK)
    pdf.multi_cell(TEXT_WIDTH, 5, node.title, new_x=XPos.LMARGIN, new_y=YPos.NEXT, padding=0)
    for number, line in enumerate(node.lines):
        pdf._font("", 8.6, (61, 70, 81) if number == 0 else GREY)
        pdf.multi_cell(TEXT_WIDTH, LINE, line, new_x=XPos.LMARGIN, new_y=YPos.NEXT, padding=0)
    pdf.ln(2)
    for scenario in node.scenarios:
        _scenario(pdf, scenario)


def _scenario(pdf: ScenarioPages, scenario: PrintedScenario) -> None:
    if pdf.will_page_break(KEEP_WITH_HEADING):
        pdf.add_page()
    pdf.set_draw_color(*STATE_COLOURS[scenario.state])
    pdf.set_line_width(0.8)
    pdf.line(LEFT, pdf.get_y(), LEFT + TEXT_WIDTH, pdf.get_y())
    pdf.ln(1.2)
    pdf.runs(scenario.heading, 4.4)
    pdf.runs(scenario.cause_consequence)
    _steps(pdf, scenario)
    if scenario.warnings:
        pdf.runs(scenario.warnings)
    _figures_and_ladder(pdf, scenario)
    if scenario.safeguards:
        pdf._font("", 8.6, GREY)
        pdf.multi_cell(TEXT_WIDTH, LINE, scenario.safeguards, new_x=XPos.LMARGIN,
                       new_y=YPos.NEXT, padding=0)
    pdf.ln(3.5)


def _steps(pdf: ScenarioPages, scenario: PrintedScenario) -> None:
    pdf._font("", 8.6, INK)
    pdf.set_fill_color(255, 255, 255)
    pdf.set_draw_color(*RULE)
    pdf.set_line_width(0.18)
    headings = FontFace(family="DejaVu", emphasis="BOLD", size_pt=7, color=GREY)
    with pdf.table(col_widths=STEP_COLUMNS, width=TEXT_WIDTH, line_height=LINE,
                   headings_style=headings, borders_layout=TableBordersLayout.HORIZONTAL_LINES,
                   padding=(0.5, 1.2), repeat_headings=1, first_row_as_headings=True,
                   v_align="TOP",
                   text_align=("LEFT", "LEFT", "LEFT", "RIGHT", "LEFT")) as table:
        table.row(STEP_HEADINGS)
        for step in scenario.steps:
            style = None if step.is_credited else FontFace(emphasis="ITALICS", color=GREY)
            row = table.row(style=style)
            for text in (step.kind, step.description, step.typed):
                row.cell(text)
            row.cell(step.value, style=_mono(style))
            row.cell(step.credited)
    pdf.ln(1)


def _mono(style: FontFace | None) -> FontFace:
    return FontFace(family="DejaVuMono", size_pt=8,
                    color=style.color if style else None)


def _figures_and_ladder(pdf: ScenarioPages, scenario: PrintedScenario) -> None:
    ladder = scenario.ladder
    if ladder is None:
        pdf.runs(scenario.figures)
        return
    height = LADDER_WIDTH * ladder.height / ladder.width
    if pdf.will_page_break(height + 1):
        pdf.add_page()
    top = pdf.get_y()
    draw_ladder(pdf, ladder, scenario.band, PAGE_WIDTH - RIGHT - LADDER_WIDTH, top)
    pdf.set_right_margin(RIGHT + LADDER_WIDTH + LADDER_GAP)
    pdf.runs(scenario.figures, 3.4)
    pdf.set_right_margin(RIGHT)
    pdf.set_y(max(pdf.get_y(), top + height) + 1)


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
