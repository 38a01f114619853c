"""Setting the scenario pages' text: runs of styled words wrapped greedily into lines, each word's
width measured once per style and kept, each line drawn as one PDF text object per style.

fpdf2's own line breaker re-measures the whole line at every character it adds (most of its
time on a scenario, measured with cProfile: DEVELOPERS.md "PDF report"); these pages need only
left or right aligned lines that break between words, so the report sets them itself.
"""

import re
from dataclasses import dataclass
from pathlib import Path

from fpdf import FPDF

from app.services.exchange.report_printed import Run

FONT_FOLDER = Path("/usr/share/fonts/truetype/dejavu")
CJK_FONT = Path("/usr/share/fonts/opentype/noto/NotoSansCJK-Regular.ttc")
"""Drawn only for the characters DejaVu lacks (Chinese, Japanese, Korean), when installed."""
CJK = re.compile("[\u2e80-\uffef]+")

Colour = tuple[int, int, int]
INK, GREY, SOFT = (29, 35, 43), (90, 100, 112), (61, 70, 81)


@dataclass(frozen=True)
class Style:
    """A font, its size in points and its colour."""

    family: str
    emphasis: str
    size: float
    colour: Colour


STYLES = {
    "": Style("DejaVu", "", 8.6, INK),
    "B": Style("DejaVu", "B", 8.6, INK),
    "I": Style("DejaVu", "I", 8.6, GREY),
    "key": Style("DejaVu", "", 7, GREY),
    "muted": Style("DejaVu", "", 8.6, GREY),
    "soft": Style("DejaVu", "", 8.6, SOFT),
    "mono": Style("DejaVuMono", "", 8, INK),
    "mono-I": Style("DejaVuMono", "I", 8, GREY),
    "th": Style("DejaVu", "B", 7, GREY),
    "h2": Style("DejaVu", "B", 13, INK),
    "h3": Style("DejaVu", "B", 10.5, INK),
    "running": Style("DejaVu", "", 7.5, GREY),
    "foot": Style("DejaVu", "", 6.6, SOFT),
    "foot-B": Style("DejaVu", "B", 6.6, SOFT),
    "status-meets": Style("DejaVu", "B", 9.5, (31, 111, 74)),
    "status-short": Style("DejaVu", "B", 9.5, (155, 44, 31)),
    "status-unknown": Style("DejaVu", "B", 9.5, (107, 91, 0)),
    "heading": Style("DejaVu", "B", 9.5, INK),
}

Line = list[Run]
_TOKENS = re.compile(r"\n|[^\S\n]+|\S+")


def add_fonts(pdf: FPDF, *, cjk: bool) -> None:
    """DejaVu Sans (regular, bold, oblique) and Sans Mono; Noto Sans CJK when asked for."""
    for emphasis, name in (("", "DejaVuSans"), ("B", "DejaVuSans-Bold"),
                           ("I", "DejaVuSans-Oblique"), ("BI", "DejaVuSans-BoldOblique")):
        pdf.add_font("DejaVu", emphasis, FONT_FOLDER / f"{name}.ttf")
    pdf.add_font("DejaVuMono", "", FONT_FOLDER / "DejaVuSansMono.ttf")
    pdf.add_font("DejaVuMono", "I", FONT_FOLDER / "DejaVuSansMono-Oblique.ttf")
    if cjk and CJK_FONT.exists():
        for emphasis in ("", "B", "I", "BI"):
            pdf.add_font("NotoCJK", emphasis, CJK_FONT, collection_font_number=2)


class TypeSetter:
    """Measures, wraps and draws styled text on one fpdf2 document."""

    def __init__(self, pdf: FPDF, *, cjk: bool) -> None:
        self.pdf = pdf
        self.cjk = cjk and CJK_FONT.exists()
        self._widths: dict[tuple[str, str], float] = {}

    def use(self, style: str, family: str | None = None) -> Style:
        """Make the style current on the document (text colour included)."""
        chosen = STYLES[style]
        self.pdf.set_font(family or chosen.family, chosen.emphasis, chosen.size)
        self.pdf.set_text_color(*chosen.colour)
        return chosen

    def width(self, style: str, text: str) -> float:
        """The text's width in mm in the style (kept: words repeat across scenarios)."""
        key = (style, text)
        found = self._widths.get(key)
        if found is None:
            found = 0.0
            for family, piece in self._pieces(style, text):
                self.use(style, family)
                found += self.pdf.get_string_width(piece, normalized=True)
            self._widths[key] = found
        return found

    def _pieces(self, style: str, text: str) -> list[tuple[str, str]]:
        """The text cut where it changes between DejaVu and the CJK font."""
        if not self.cjk or CJK.search(text) is None:
            return [(STYLES[style].family, text)]
        pieces: list[tuple[str, str]] = []
        at = 0
        for found in CJK.finditer(text):
            if found.start() > at:
                pieces.append((STYLES[style].family, text[at:found.start()]))
            pieces.append(("NotoCJK", found.group()))
            at = found.end()
        if at < len(text):
            pieces.append((STYLES[style].family, text[at:]))
        return pieces

    def wrap(self, runs: tuple[Run, ...] | list[Run], width: float) -> list[Line]:
        """The runs broken into lines no wider than `width` mm, between words ("\\n" breaks
        a line; a word wider than a line is cut between its characters)."""
        lines: list[Line] = [[]]
        used = 0.0
        for style, text in runs:
            for token in _TOKENS.findall(text):
                if token == "\n":
                    lines.append([])
                    used = 0.0
                    continue
                if token.isspace() and not lines[-1]:
                    continue  # no space at the start of a line
                size = self.width(style, token)
                if used + size > width and lines[-1] and not token.isspace():
                    _trim(lines[-1])
                    lines.append([])
                    used = 0.0
                if size > width:
                    used = self._cut(lines, style, token, width)
                    continue
                _append(lines[-1], style, token)
                used += size
        _trim(lines[-1])
        return lines

    def _cut(self, lines: list[Line], style: str, word: str, width: float) -> float:
        """A word wider than the line, over as many lines as it needs; the last line's width."""
        piece, used = "", 0.0
        for character in word:
            size = self.width(style, character)
            if used + size > width and piece:
                _append(lines[-1], style, piece)
                lines.append([])
                piece, used = "", 0.0
            piece += character
            used += size
        _append(lines[-1], style, piece)
        return used

    def line_width(self, line: Line) -> float:
        """A set line's width in mm."""
        return sum(self.width(style, text) for style, text in line)

    def draw_line(self, line: Line, x: float, baseline: float, *, align: str = "L",
                  width: float = 0.0) -> None:
        """One line with its left end at x ("L") or its right end at x + width ("R")."""
        if align == "R":
            x += width - self.line_width(line)
        for style, text in line:
            for family, piece in self._pieces(style, text):
                self.use(style, family)
                self.pdf.text(x, baseline, piece)
                x += self.width(style, piece)


def _append(line: Line, style: str, text: str) -> None:
    if line and line[-1][0] == style:
        line[-1] = (style, line[-1][1] + text)
    else:
        line.append((style, text))


def _trim(line: Line) -> None:
    """Drop the spaces a line ends with (over as many runs as they take)."""
    while line:
        style, text = line[-1]
        if text.rstrip():
            line[-1] = (style, text.rstrip())
            return
        line.pop()
