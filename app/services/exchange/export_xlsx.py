"""The study as an Excel workbook: a cover sheet, then one sheet per table."""

import io
from collections.abc import Sequence
from datetime import datetime

from openpyxl import Workbook
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from app.services.exchange.export_tables import Cell, Column, StudyData, Table, spreadsheet_text
from app.services.exchange.study_schema import SCHEMA_PATH

# Excel's limit on the characters in one cell.
MAX_CELL_CHARS = 32_767
TRUNCATED = " … [cut: longer than a spreadsheet cell holds; see the JSON export]"
NARROWEST, WIDEST, NUMBER_WIDTH = 8, 60, 14
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
}


def workbook_bytes(
    tables: Sequence[Table], data: StudyData, *, cautions: str, exported_at: datetime
) -> bytes:
    """The workbook as .xlsx bytes: the cover first, then each table on its own sheet."""
    workbook = Workbook()
    cover = workbook.active
    assert cover is not None
    _write_cover(cover, data["study"], cautions=cautions, exported_at=exported_at)
    for table in tables:
        _write_table(workbook.create_sheet(table.title), table)
    workbook.properties.title = data["study"]["title"]
    workbook.properties.creator = "Tallyroom"
    buffer = io.BytesIO()
    workbook.save(buffer)
    return buffer.getvalue()


def _write_cover(
    sheet: Worksheet, study: dict[str, str], *, cautions: str, exported_at: datetime
) -> None:
    sheet_notes: list[list[Cell]] = [[f"Sheet: {name}", note]
                                     for name, note in SHEET_NOTES.items()]
    rows: list[list[Cell]] = [
        ["Study", study["title"]], ["Facility", study["facility"]],
        ["Revision", study["revision_label"]], ["Exported (UTC)", exported_at],
        ["Scope", study["scope"]], ["Criteria basis", study["criteria_basis"]],
        ["Frequencies", "events per year; probabilities and PFDs are fractions of 1"],
        ["Cautions", cautions],
        ["File format", f"the JSON export follows the schema at {SCHEMA_PATH}"],
        *sheet_notes,
    ]  # fmt: skip
    columns = (Column("About this file"), Column("", "yyyy-mm-dd hh:mm"))
    _write_table(sheet, Table("About", columns, rows))
    sheet.column_dimensions["B"].width = 100


def _write_table(sheet: Worksheet, table: Table) -> None:
    sheet.title = table.title
    for column_number, column in enumerate(table.columns, 1):
        header = sheet.cell(row=1, column=column_number, value=spreadsheet_text(column.header))
        header.font, header.fill, header.border = HEADER_FONT, HEADER_FILL, HEADER_RULE
    for row_number, row in enumerate(table.rows, 2):
        for column_number, (column, value) in enumerate(zip(table.columns, row, strict=True), 1):
            _write_cell(sheet, row_number, column_number, value, column.number_format)
    sheet.freeze_panes = "B2" if table.title == "Scenarios" else "A2"
    if table.rows:
        sheet.auto_filter.ref = sheet.dimensions
    _fit_widths(sheet, table)


def _write_cell(
    sheet: Worksheet, row: int, column: int, value: Cell, number_format: str | None
) -> None:
    cell = sheet.cell(row=row, column=column)
    if isinstance(value, str):
        cell.value = cell_text(value)
        cell.data_type = "s"  # never a formula, whatever the text
        return
    cell.value = value
    if number_format and value is not None:
        cell.number_format = number_format


def cell_text(text: str) -> str:
    """Text as a workbook cell can hold it: no XML-illegal characters, formula-safe, cut to fit."""
    safe = spreadsheet_text(ILLEGAL_CHARACTERS_RE.sub("\ufffd", text))
    if len(safe) > MAX_CELL_CHARS:
        return safe[: MAX_CELL_CHARS - len(TRUNCATED)] + TRUNCATED
    return safe


def _fit_widths(sheet: Worksheet, table: Table) -> None:
    for number, column in enumerate(table.columns, 1):
        values = [row[number - 1] for row in table.rows]
        texts = [v for v in values if isinstance(v, str)]
        longest = max((len(line) for t in [column.header, *texts] for line in t.splitlines()),
                      default=0)
        width = max(NARROWEST, min(WIDEST, longest + 2))
        if len(texts) < len([v for v in values if v is not None]):
            width = max(width, NUMBER_WIDTH)
        letter = get_column_letter(number)
        sheet.column_dimensions[letter].width = width
        if longest + 2 > WIDEST:
            for cell in sheet[letter][1:]:
                cell.alignment = WRAPPED
