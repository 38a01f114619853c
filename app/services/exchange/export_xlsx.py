"""The study as an Excel workbook: a cover sheet, then one sheet per table.

Written straight as SpreadsheetML (ECMA-376 / ISO/IEC 29500 "Office Open XML", Part 1: the
package, workbook, styles and worksheet parts), one row at a time into a temporary file per
sheet: a study of 10,000 scenarios (about a million cells) is neither held in memory nor sent
through a cell object each. The cells are what openpyxl's write-only mode wrote before (the
same values, number formats, header style, widths, frozen header and filter, wrapped columns;
`tests/services/exchange/test_exports_stored_path.py` reads both back cell by cell): numbers
as "%.16g", dates as Excel serial days, text as inline strings. A column's width, and so
whether its text wraps, is known only after its last row: every column has its own cell
styles, and the styles part, written last, says which of them wrap.
"""

import shutil
import tempfile
import zipfile
from collections.abc import Iterable, Iterator, Sequence
from datetime import date, datetime
from typing import IO
from xml.sax.saxutils import escape, quoteattr

from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE
from openpyxl.utils import get_column_letter
from openpyxl.utils.datetime import to_excel

from app.services.exchange.export_tables import (
    Cell,
    Column,
    Table,
    shown_number,
    spreadsheet_text,
)
from app.services.exchange.study_schema import SCHEMA_PATH

# Excel's limit on the characters in one cell.
MAX_CELL_CHARS = 32_767
TRUNCATED = " … [cut: longer than a spreadsheet cell holds; see the JSON export]"
NARROWEST, WIDEST, NUMBER_WIDTH = 8, 80, 14
HEADER_FILL_RGB, HEADER_RULE_RGB = "00E4E1DA", "0026323F"
SHEET_NOTES = {
    "Scenarios": "one row per scenario, numbers computed by Tallyroom",
    "Steps": "one row per step (initiating event, enabling conditions, modifiers, IPLs)",
    "Actions": "the recommendations and the scenarios they address",
    "Criteria": "severity categories and their tolerable frequencies",
    "Attendance": "participants against session dates",
    "Change log": "every recorded change, oldest first",
    "Safeguards": "safeguards listed but not credited as IPLs",
    "Notes": "the notes written on each scenario",
    "Warnings": "every IPL-check warning with its source",
    "Added functions": "the safety functions the gaps ask for: SIL, mode, demand",
    "Estimate rounds": "each round of private estimates: figures, agreed value, dissents",
    "Estimates": "each person's revealed estimate, one row each",
    "Word scale": "the team's words and the numbers adopted for them",
}
# Widest text a date or time cell shows ("2026-11-12 15:30:00"), so no column shows '####'.
DATE_WIDTH, MOMENT_WIDTH = 10, 19


# The formats a date or time cell gets when its column names none (openpyxl's defaults).
DAY_DEFAULT, MOMENT_DEFAULT = "yyyy-mm-dd", "yyyy-mm-dd h:mm:ss"
MAIN_NS = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
REL_NS = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
PACKAGE_REL_NS = "http://schemas.openxmlformats.org/package/2006/relationships"
XML_HEAD = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
StyleKey = tuple[int, str | None]  # (column number, number format); column 0: the header


class Styles:
    """The cell styles in use: one per column and number format, and the header's."""

    def __init__(self) -> None:
        self.keys: dict[StyleKey, int] = {(0, None): 0, (-1, None): 1}  # 0: plain, 1: header
        self.wrapped: set[int] = set()  # columns (sheet * 10,000 + column) whose text wraps

    def wrap(self, sheet: int, column: int) -> None:
        """Every cell of this sheet's column wraps its text (the header excepted)."""
        self.wrapped.add(sheet * 10_000 + column)

    def of(self, sheet: int, column: int, number_format: str | None) -> int:
        """The style id of a cell of this sheet's column with this number format."""
        key = (sheet * 10_000 + column, number_format)
        if key not in self.keys:
            self.keys[key] = len(self.keys)
        return self.keys[key]

    def xml(self) -> str:
        """The styles part: number formats, fonts, fills, borders and one xf per style."""
        formats = sorted({f for _, f in self.keys if f is not None})
        format_ids = {f: 164 + i for i, f in enumerate(formats)}
        xfs = []
        for slot, number_format in sorted(self.keys, key=self.keys.__getitem__):
            if slot == -1:
                xfs.append('<xf numFmtId="0" fontId="1" fillId="2" borderId="1" xfId="0" '
                           'applyFont="1" applyFill="1" applyBorder="1"/>')
                continue
            number = format_ids.get(number_format or "", 0)
            applied = ' applyNumberFormat="1"' if number else ""
            if slot in self.wrapped:
                xfs.append(f'<xf numFmtId="{number}" fontId="0" fillId="0" borderId="0" '
                           f'xfId="0"{applied} applyAlignment="1"><alignment vertical="top" '
                           'wrapText="1"/></xf>')
            else:
                xfs.append(f'<xf numFmtId="{number}" fontId="0" fillId="0" borderId="0" '
                           f'xfId="0"{applied}/>')
        numbers = "".join(f'<numFmt numFmtId="{i}" formatCode={quoteattr(f)}/>'
                          for f, i in format_ids.items())
        return (f'{XML_HEAD}<styleSheet xmlns="{MAIN_NS}">'
                f'<numFmts count="{len(format_ids)}">{numbers}</numFmts>'
                '<fonts count="2"><font><sz val="11"/><name val="Calibri"/><family val="2"/>'
                '</font><font><b val="1"/></font></fonts>'
                '<fills count="3"><fill><patternFill/></fill><fill><patternFill '
                'patternType="gray125"/></fill><fill><patternFill patternType="solid">'
                f'<fgColor rgb="{HEADER_FILL_RGB}"/></patternFill></fill></fills>'
                '<borders count="2"><border><left/><right/><top/><bottom/><diagonal/></border>'
                f'<border><left/><right/><top/><bottom style="medium"><color '
                f'rgb="{HEADER_RULE_RGB}"/></bottom><diagonal/></border></borders>'
                '<cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/>'
                f'</cellStyleXfs><cellXfs count="{len(xfs)}">{"".join(xfs)}</cellXfs>'
                '<cellStyles count="1"><cellStyle name="Normal" xfId="0" builtinId="0"/>'
                '</cellStyles></styleSheet>')


# The most characters a number in this format can show (format_number: "-9.9e-308"): a column
# whose widest line is already longer need not format its numbers to measure them.
LONGEST_NUMBER = {"0.0E+0": 9}
REMEMBERED_LENGTH, REMEMBERED_TEXTS = 200, 4_096


class SheetWriter:
    """One sheet: its rows go to a temporary file as XML while each column's widest line is
    measured; `finish` sets the widths (and which columns wrap) once the last row is in."""

    def __init__(self, key: int, title: str, columns: Sequence[Column], styles: Styles,
                 freeze: str = "A2") -> None:
        self.key, self.title, self.columns, self.styles = key, title, columns, styles
        self.index = key  # its place in the workbook, fixed when the workbook is saved
        self.freeze = freeze
        self.body: IO[bytes] = tempfile.TemporaryFile()  # noqa: SIM115 - closed by write_to
        self.letters = [get_column_letter(n) for n in range(1, len(columns) + 1)]
        self.longest = [shown_length(c.header, c.number_format) for c in columns]
        self.rows = 1
        self.formats = [c.number_format for c in columns]
        self.plain = [styles.of(key, n, None) for n in range(1, len(columns) + 1)]
        self.shaped = [styles.of(key, n, c.number_format) for n, c in enumerate(columns, 1)]
        self.bounds = [LONGEST_NUMBER.get(c.number_format or "", 1 << 30) for c in columns]
        self.texts: dict[str, str] = {}
        self.measured: list[set[float]] = [set() for _ in columns]
        # Each cell's XML around its row number, per column: '<c r="B' + '12' + '" s="3"/>'.
        self.opens = [f'<c r="{letter}' for letter in self.letters]
        self.empty_tails = [f'" s="{style}"/>' for style in self.plain]
        self.text_tails = [f'" s="{style}" t="inlineStr"' for style in self.plain]
        self.number_tails = [f'" s="{style}" t="n"><v>' for style in self.shaped]
        header = "".join(_text_cell(f"{letter}1", spreadsheet_text(c.header), 1)
                         for letter, c in zip(self.letters, columns, strict=True))
        self.body.write(f'<row r="1">{header}</row>'.encode())

    def append(self, row: Sequence[Cell]) -> None:
        """Write one row (its cells in column order). Floats, ints and plain text, most of a
        large study's million cells, take the short way; anything else `_other_cell`."""
        if len(row) != len(self.columns):
            raise ValueError(f"{self.title}: a row of {len(row)} cells for "
                             f"{len(self.columns)} columns")
        self.rows += 1
        number = str(self.rows)
        cells: list[str] = []
        add = cells.append
        longest, texts, bounds, opens = self.longest, self.texts, self.bounds, self.opens
        for position, value in enumerate(row):
            kind = type(value)
            if value is None:
                add(f"{opens[position]}{number}{self.empty_tails[position]}")
            elif kind is str:
                if len(value) > longest[position]:  # type: ignore[arg-type]
                    self._measure(position, value)
                inner = texts.get(value)  # type: ignore[arg-type]
                if inner is None:
                    inner = self._remember(value)  # type: ignore[arg-type]
                add(f"{opens[position]}{number}{self.text_tails[position]}{inner}")
            elif kind is float or kind is int:
                if longest[position] < bounds[position]:
                    self._measure_number(position, value)  # type: ignore[arg-type]
                text = "%.16g" % value  # type: ignore[str-format]  # noqa: UP031 - see _number
                add(f"{opens[position]}{number}{self.number_tails[position]}"
                    f"{'' if text in NOT_FINITE else text}</v></c>")
            else:
                add(self._other_cell(position, f"{self.letters[position]}{number}", value))
        self.body.write(f'<row r="{number}">{"".join(cells)}</row>'.encode())

    def _other_cell(self, position: int, ref: str, value: Cell) -> str:
        """A cell of any other type: a date or time, a bool, text or a number of a subtype."""
        if isinstance(value, str):
            if len(value) > self.longest[position]:
                self._measure(position, value)
            inner = self.texts.get(value)
            if inner is None:
                inner = self._remember(value)
            return f'<c r="{ref}" s="{self.plain[position]}" t="inlineStr"{inner}'
        if isinstance(value, date):
            self._measure(position, value)
            return self._date_cell(position, ref, value)
        if self.longest[position] < self.bounds[position]:
            self._measure(position, value)
        kind = "b" if isinstance(value, bool) else "n"
        return (f'<c r="{ref}" s="{self.shaped[position]}" t="{kind}">'
                f"<v>{_number(value)}</v></c>")  # type: ignore[arg-type]

    def _remember(self, value: str) -> str:
        """A text cell's XML after its attributes; short texts (labels, words) are kept, as
        they repeat down a column, until a few thousand are kept."""
        inner = _text_inner(cell_text(value))
        if len(value) <= REMEMBERED_LENGTH:
            if len(self.texts) >= REMEMBERED_TEXTS:
                self.texts.clear()
            self.texts[value] = inner
        return inner

    def extend(self, rows: Iterable[Sequence[Cell]]) -> None:
        """Write several rows."""
        for row in rows:
            self.append(row)

    def _measure_number(self, position: int, value: float) -> None:
        """_measure, once per distinct number of a column (zero always: 0.0 and -0.0 are one
        key but are shown apart)."""
        measured = self.measured[position]
        if value and value in measured:
            return
        self._measure(position, value)
        if value:
            if len(measured) >= REMEMBERED_TEXTS:
                measured.clear()
            measured.add(value)

    def _measure(self, position: int, value: Cell) -> None:
        length = shown_length(value, self.formats[position])
        if length > self.longest[position]:
            self.longest[position] = length

    def _date_cell(self, position: int, ref: str, value: date) -> str:
        default = MOMENT_DEFAULT if isinstance(value, datetime) else DAY_DEFAULT
        style = self.styles.of(self.key, position + 1, self.formats[position] or default)
        serial = to_excel(value)  # type: ignore[no-untyped-call]
        return f'<c r="{ref}" s="{style}" t="n"><v>{_number(serial)}</v></c>'

    def finish(self) -> int:
        """Fix the widths and the wrapped columns; the rows written."""
        self.widths = [max(NARROWEST, min(WIDEST, longest + 2)) for longest in self.longest]
        for position, longest in enumerate(self.longest, 1):
            if longest + 2 > WIDEST:
                self.styles.wrap(self.key, position)
        return self.rows

    def write_to(self, target: IO[bytes]) -> None:
        """The sheet's XML: views, widths, the rows written so far, the filter."""
        cols = "".join(f'<col min="{n}" max="{n}" width="{w}" customWidth="1"/>'
                       for n, w in enumerate(self.widths, 1))
        target.write(f'{XML_HEAD}<worksheet xmlns="{MAIN_NS}" xmlns:r="{REL_NS}">'
                     f'<sheetViews><sheetView workbookViewId="0">{_pane(self.freeze)}'
                     f'</sheetView></sheetViews><sheetFormatPr baseColWidth="8" '
                     f'defaultRowHeight="15"/><cols>{cols}</cols><sheetData>'.encode())
        self.body.seek(0)
        shutil.copyfileobj(self.body, target, 1 << 20)
        self.body.close()
        target.write(f"</sheetData>{self._filter()}<pageMargins left=\"0.75\" right=\"0.75\" "
                     f'top="1" bottom="1" header="0.5" footer="0.5"/></worksheet>'.encode())

    @property
    def filter_ref(self) -> str:
        """The filtered range ('' when the table has no rows)."""
        return f"A1:{self.letters[-1]}{self.rows}" if self.rows > 1 else ""

    def _filter(self) -> str:
        return f'<autoFilter ref="{self.filter_ref}"/>' if self.filter_ref else ""


def _text_cell(ref: str, text: str, style: int) -> str:
    """An inline string cell, as openpyxl writes one."""
    return f'<c r="{ref}" s="{style}" t="inlineStr"{_text_inner(text)}'


def _text_inner(text: str) -> str:
    """What follows an inline string cell's attributes (xml:space kept for edge whitespace,
    as openpyxl does; & < > escaped as ElementTree escapes text)."""
    if text == "":
        return "/>"
    stripped = text.strip()
    space = ' xml:space="preserve"' if stripped and stripped != text else ""
    escaped = text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    return f"><is><t{space}>{escaped}</t></is></c>"


NOT_FINITE = frozenset({"nan", "inf", "-inf"})


def _number(value: float) -> str:
    """A number as openpyxl writes it: 16 significant figures; nothing for NaN or infinity."""
    text = "%.16g" % value  # noqa: UP031 - as openpyxl
    return "" if text in NOT_FINITE else text


def _pane(freeze: str) -> str:
    if freeze == "B2":
        return ('<pane xSplit="1" ySplit="1" topLeftCell="B2" activePane="bottomRight" '
                'state="frozen"/><selection pane="topRight"/><selection pane="bottomLeft"/>'
                '<selection pane="bottomRight" activeCell="B2" sqref="B2"/>')
    return ('<pane ySplit="1" topLeftCell="A2" activePane="bottomLeft" state="frozen"/>'
            '<selection pane="bottomLeft" activeCell="A2" sqref="A2"/>')


class WorkbookWriter:
    """Sheets in workbook order, each written row by row; `save` packs them into the file."""

    def __init__(self) -> None:
        self.styles = Styles()
        self.sheets: list[SheetWriter] = []
        self.made = 0

    def sheet(self, title: str, columns: Sequence[Column], at: int | None = None
              ) -> SheetWriter:
        """A new sheet, at the end of the workbook or at position `at` (the scenario table
        freezes its first column as well as the header)."""
        self.made += 1
        sheet = SheetWriter(self.made, title, columns, self.styles,
                            "B2" if title == "Scenarios" else "A2")
        self.sheets.insert(len(self.sheets) if at is None else at, sheet)
        return sheet

    def table(self, table: Table, at: int | None = None) -> None:
        """A whole table as one sheet."""
        self.sheet(table.title, table.columns, at).extend(table.rows)

    def save(self, target: IO[bytes], *, title: str, creator: str, created: datetime) -> None:
        """Pack the workbook: package parts, the workbook, styles and every sheet."""
        for index, sheet in enumerate(self.sheets, 1):
            sheet.index = index
            sheet.finish()
        with zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED, compresslevel=1) as package:
            for name, text in self._parts(title, creator, created):
                package.writestr(name, text)
            for sheet in self.sheets:
                with package.open(f"xl/worksheets/sheet{sheet.index}.xml", "w",
                                  force_zip64=True) as part:
                    sheet.write_to(part)

    def _parts(self, title: str, creator: str, created: datetime) -> Iterator[tuple[str, str]]:
        count = len(self.sheets)
        sheet_types = "".join(
            f'<Override PartName="/xl/worksheets/sheet{n}.xml" ContentType="application/'
            'vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>'
            for n in range(1, count + 1))
        yield "[Content_Types].xml", (
            f'{XML_HEAD}<Types xmlns="http://schemas.openxmlformats.org/package/2006/'
            'content-types"><Default Extension="rels" ContentType="application/vnd.'
            'openxmlformats-package.relationships+xml"/><Default Extension="xml" '
            'ContentType="application/xml"/><Override PartName="/xl/workbook.xml" ContentType='
            '"application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>'
            '<Override PartName="/xl/styles.xml" ContentType="application/vnd.openxmlformats-'
            f'officedocument.spreadsheetml.styles+xml"/>{sheet_types}<Override PartName='
            '"/docProps/core.xml" ContentType="application/vnd.openxmlformats-package.core-'
            'properties+xml"/><Override PartName="/docProps/app.xml" ContentType="application/'
            'vnd.openxmlformats-officedocument.extended-properties+xml"/></Types>')
        yield "_rels/.rels", (
            f'{XML_HEAD}<Relationships xmlns="{PACKAGE_REL_NS}"><Relationship Id="rId1" Type='
            f'"{REL_NS}/officeDocument" Target="xl/workbook.xml"/><Relationship Id="rId2" '
            'Type="http://schemas.openxmlformats.org/package/2006/relationships/metadata/'
            'core-properties" Target="docProps/core.xml"/><Relationship Id="rId3" Type='
            f'"{REL_NS}/extended-properties" Target="docProps/app.xml"/></Relationships>')
        yield "docProps/core.xml", _core(title, creator, created)
        yield "docProps/app.xml", (
            f'{XML_HEAD}<Properties xmlns="http://schemas.openxmlformats.org/officeDocument/'
            '2006/extended-properties"><Application>Tallyroom</Application></Properties>')
        yield "xl/workbook.xml", self._workbook_xml()
        yield "xl/_rels/workbook.xml.rels", (
            f'{XML_HEAD}<Relationships xmlns="{PACKAGE_REL_NS}">'
            + "".join(f'<Relationship Id="rId{n}" Type="{REL_NS}/worksheet" '
                      f'Target="worksheets/sheet{n}.xml"/>' for n in range(1, count + 1))
            + f'<Relationship Id="rId{count + 1}" Type="{REL_NS}/styles" '
              'Target="styles.xml"/></Relationships>')
        yield "xl/styles.xml", self.styles.xml()

    def _workbook_xml(self) -> str:
        sheets = "".join(f'<sheet name={quoteattr(s.title)} sheetId="{s.index}" '
                         f'r:id="rId{s.index}"/>' for s in self.sheets)
        names = "".join(
            f'<definedName name="_xlnm._FilterDatabase" localSheetId="{s.index - 1}" '
            f'hidden="1">{escape(_absolute(s.title, s.filter_ref))}</definedName>'
            for s in self.sheets if s.filter_ref)
        return (f'{XML_HEAD}<workbook xmlns="{MAIN_NS}" xmlns:r="{REL_NS}"><bookViews>'
                f'<workbookView activeTab="0"/></bookViews><sheets>{sheets}</sheets>'
                + (f"<definedNames>{names}</definedNames>" if names else "")
                + "</workbook>")


def _absolute(title: str, ref: str) -> str:
    """'Scenarios'!$A$1:$BX$10001."""
    first, last = ref.split(":")
    quoted = "'" + title.replace("'", "''") + "'"
    return f"{quoted}!{_dollars(first)}:{_dollars(last)}"


def _dollars(cell: str) -> str:
    letters = "".join(ch for ch in cell if ch.isalpha())
    return f"${letters}${cell[len(letters):]}"


def _core(title: str, creator: str, created: datetime) -> str:
    moment = created.strftime("%Y-%m-%dT%H:%M:%SZ")
    return (f'{XML_HEAD}<cp:coreProperties xmlns:cp="http://schemas.openxmlformats.org/package/'
            '2006/metadata/core-properties" xmlns:dc="http://purl.org/dc/elements/1.1/" '
            'xmlns:dcterms="http://purl.org/dc/terms/" xmlns:xsi="http://www.w3.org/2001/'
            f'XMLSchema-instance"><dc:title>{escape(title)}</dc:title><dc:creator>'
            f'{escape(creator)}</dc:creator><dcterms:created xsi:type="dcterms:W3CDTF">{moment}'
            f'</dcterms:created><dcterms:modified xsi:type="dcterms:W3CDTF">{moment}'
            '</dcterms:modified></cp:coreProperties>')


def cover_table(study: dict[str, str], *, cautions: str, exported_at: datetime,
                revision: str) -> Table:
    """The About sheet: what the file is, its revision, the cautions, what each sheet holds."""
    sheet_notes: list[list[Cell]] = [[f"Sheet: {name}", note]
                                     for name, note in SHEET_NOTES.items()]
    rows: list[list[Cell]] = [
        ["Study", study["title"]], ["Facility", study["facility"]],
        ["Revision", revision or study["revision_label"]], ["Exported (UTC)", exported_at],
        ["Scope", study["scope"]], ["Criteria basis", study["criteria_basis"]],
        ["Frequencies", "events per year; probabilities and PFDs are fractions of 1"],
        ["Cautions", cautions],
        ["File format", f"the JSON export follows the schema at {SCHEMA_PATH}"],
        *sheet_notes,
    ]  # fmt: skip
    columns = (Column("About this file"), Column("", "yyyy-mm-dd hh:mm"))
    return Table("About", columns, rows)


def cell_text(text: str) -> str:
    """Text as a workbook cell can hold it: no XML-illegal characters, formula-safe, cut to fit."""
    safe = spreadsheet_text(ILLEGAL_CHARACTERS_RE.sub("\ufffd", text))
    if len(safe) > MAX_CELL_CHARS:
        return safe[: MAX_CELL_CHARS - len(TRUNCATED)] + TRUNCATED
    return safe


def shown_length(value: Cell, number_format: str | None = None) -> int:
    """How many characters a cell shows: its longest line, a date's or number's text as its
    number format writes it."""
    if value is None:
        return 0
    if isinstance(value, str):
        return max((len(line) for line in value.splitlines()), default=0)
    if isinstance(value, datetime):
        return MOMENT_WIDTH
    if isinstance(value, date):
        return DATE_WIDTH
    return len(shown_number(value, number_format))
