"""The study as an Excel workbook: a cover sheet, then one sheet per table.

Written in openpyxl's write-only mode: each row goes to the file as it is made, so a study of
10,000 scenarios neither holds every cell as an object nor takes half a minute. Column widths,
the frozen header and the filter are set before the rows, as that mode requires.
"""

import io
from collections.abc import Sequence
from datetime import date, datetime

from openpyxl import Workbook
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE, WriteOnlyCell
from openpyxl.cell.cell import Cell as SheetCell
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter
from openpyxl.worksheet._write_only import WriteOnlyWorksheet

from app.services.exchange.export_tables import (
    Cell,
    Column,
    StudyData,
    Table,
    shown_number,
    spreadsheet_text,
)
from app.services.exchange.study_schema import SCHEMA_PATH

# Excel's limit on the characters in one cell.
MAX_CELL_CHARS = 32_767
TRUNCATED = " … [cut: longer than a spreadsheet cell holds; see the JSON export]"
NARROWEST, WIDEST, NUMBER_WIDTH = 8, 80, 14
HEADER_FONT = Font(bold=True)
HEADER_FILL = PatternFill("solid", fgColor="E4E1DA")
HEADER_RULE = Border(bottom=Side(style="medium", color="26323F"))
WRAPPED = Alignment(wrap_text=True, vertical="top")

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


def workbook_bytes(
    tables: Sequence[Table], data: StudyData, *, cautions: str, exported_at: datetime,
    revision: str = "",
) -> bytes:
    """The workbook as .xlsx bytes: the cover first, then each table on its own sheet."""
    workbook = Workbook(write_only=True)
    _write_cover(workbook.create_sheet("About"), data["study"], cautions=cautions,
                 exported_at=exported_at, revision=revision)
    for table in tables:
        _write_table(workbook.create_sheet(table.title), table)
    workbook.properties.title = data["study"]["title"]
    workbook.properties.creator = "Tallyroom"
    buffer = io.BytesIO()
    workbook.save(buffer)
    return buffer.getvalue()


def _write_cover(
    sheet: WriteOnlyWorksheet, study: dict[str, str], *, cautions: str, exported_at: datetime,
    revision: str,
) -> None:
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
    _write_table(sheet, Table("About", columns, rows))


def _write_table(sheet: WriteOnlyWorksheet, table: Table) -> None:
    sheet.title = table.title
    wrapped = _fit_widths(sheet, table)
    sheet.freeze_panes = "B2" if table.title == "Scenarios" else "A2"
    if table.rows:
        last = f"{get_column_letter(len(table.columns))}{len(table.rows) + 1}"
        # the stubs miss the write-only sheet's auto_filter
        sheet.auto_filter.ref = f"A1:{last}"  # type: ignore[attr-defined]
    sheet.append([_header_cell(sheet, column.header) for column in table.columns])
    for row in table.rows:
        sheet.append([_cell(sheet, value, column.number_format, number in wrapped)
                      for number, (column, value) in enumerate(zip(table.columns, row,
                                                                   strict=True), 1)])


def _header_cell(sheet: WriteOnlyWorksheet, header: str) -> SheetCell:
    cell = WriteOnlyCell(sheet, value=spreadsheet_text(header))
    cell.font, cell.fill, cell.border = HEADER_FONT, HEADER_FILL, HEADER_RULE
    return cell


def _cell(sheet: WriteOnlyWorksheet, value: Cell, number_format: str | None,
          wrap: bool) -> SheetCell:
    if isinstance(value, str):
        cell = WriteOnlyCell(sheet, value=cell_text(value))
        cell.data_type = "s"  # never a formula, whatever the text
    else:
        cell = WriteOnlyCell(sheet, value=value)  # type: ignore[arg-type]  # dates are fine
        if number_format and value is not None:
            cell.number_format = number_format
    if wrap:
        cell.alignment = WRAPPED
    return cell


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
    return len(_number_text(value, number_format))


def _number_text(value: float, number_format: str | None) -> str:
    return shown_number(value, number_format)


def _fit_widths(sheet: WriteOnlyWorksheet, table: Table) -> set[int]:
    """Set each column's width from its longest line; the columns whose text wraps."""
    wrapped: set[int] = set()
    # the stubs miss the write-only sheet's column_dimensions
    dimensions = sheet.column_dimensions  # type: ignore[attr-defined]
    for number, column in enumerate(table.columns, 1):
        cells = [row[number - 1] for row in table.rows]
        longest = max((shown_length(v, column.number_format) for v in [column.header, *cells]),
                      default=0)
        dimensions[get_column_letter(number)].width = max(NARROWEST, min(WIDEST, longest + 2))
        if longest + 2 > WIDEST:
            wrapped.add(number)
    return wrapped
