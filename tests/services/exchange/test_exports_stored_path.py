"""The CSV and the workbook read each scenario's stored results one node at a time and write
their own SpreadsheetML; they must say exactly what a from-scratch computation of the study
says, written as openpyxl's write-only mode wrote it before.

The reference here is independent of the fast path twice over: the figures come from
`load_study_tree` (every scenario computed from its steps now, not read back from
`scenario_result`) and the workbook is written by openpyxl (a library outside the project,
the writer the exports used until issue 14) with the old sheet rules: widths from each
column's longest shown line, the frozen header, the filter, wrapped text past 80 characters.
"""

import io
from datetime import UTC, datetime
from typing import Any

import pytest
from openpyxl import Workbook, load_workbook
from openpyxl.cell.cell import WriteOnlyCell
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter
from sqlmodel import Session

from app.db.models import Study
from app.routes.rendering import CAUTIONS, templates
from app.services.exchange.export_audit_tables import audit_tables
from app.services.exchange.export_csv import table_csv
from app.services.exchange.export_rounds import round_tables
from app.services.exchange.export_tables import (
    Table,
    all_tables,
    file_ref_numbers,
    scenario_table,
    spreadsheet_text,
)
from app.services.exchange.export_xlsx import cell_text, cover_table, shown_length
from app.services.exchange.exports import ExportFormat, build_export
from app.services.exchange.report_source import working_copy_label
from app.services.exchange.study_file import export_study
from app.services.exchange.study_import import import_study_text
from app.services.study.tree import load_study_tree
from bench.generate import study_text

SCENARIOS = 240  # several nodes, long and short deviations, steps of every kind


@pytest.fixture(params=["demo", "generated"])
def study(request: pytest.FixtureRequest, session: Session) -> Study:
    """The demo study (rounds, notes, safeguards, warnings) and an invented larger one."""
    if request.param == "demo":
        return request.getfixturevalue("demo_study")  # type: ignore[no-any-return]
    return import_study_text(session, study_text(SCENARIOS).encode())


def _export(session: Session, study: Study, export_format: ExportFormat) -> bytes:
    return build_export(session=session, study_id=study.id or 0, export_format=export_format,
                        env=templates.env).content


def test_the_csv_is_byte_for_byte_the_from_scratch_table(session: Session, study: Study
                                                         ) -> None:
    tree = load_study_tree(session, study.id or 0)
    expected = table_csv(scenario_table(tree), cautions=CAUTIONS)
    assert _export(session, study, ExportFormat.CSV) == expected


def test_the_json_files_figures_are_the_from_scratch_table(session: Session, study: Study
                                                           ) -> None:
    """computed_figures: the scenario table's exact values keyed by header, with the file ref
    (S1, S2, ... in worksheet order), as the tree gives them."""
    import json

    from app.services.exchange.export_tables import computed_figures

    tree = load_study_tree(session, study.id or 0)
    data = json.loads(_export(session, study, ExportFormat.JSON))
    assert data["computed_figures"] == json.loads(json.dumps(computed_figures(tree)))


def _openpyxl_workbook(tables: list[Table]) -> bytes:
    """The workbook as the exports wrote it with openpyxl's write-only mode (the reference)."""
    book = Workbook(write_only=True)
    for table in tables:
        sheet = book.create_sheet(table.title)
        wrapped = set()
        for number, column in enumerate(table.columns, 1):
            longest = max(shown_length(v, column.number_format)
                          for v in [column.header, *(row[number - 1] for row in table.rows)])
            sheet.column_dimensions[get_column_letter(number)].width = max(8, min(80,
                                                                              longest + 2))
            if longest + 2 > 80:
                wrapped.add(number)
        sheet.freeze_panes = "B2" if table.title == "Scenarios" else "A2"
        if table.rows:
            sheet.auto_filter.ref = (f"A1:{get_column_letter(len(table.columns))}"
                                     f"{len(table.rows) + 1}")
        header = []
        for column in table.columns:
            cell = WriteOnlyCell(sheet, value=spreadsheet_text(column.header))
            cell.font, cell.fill = Font(bold=True), PatternFill("solid", fgColor="E4E1DA")
            cell.border = Border(bottom=Side(style="medium", color="26323F"))
            header.append(cell)
        sheet.append(header)
        for row in table.rows:
            sheet.append([_reference_cell(sheet, value, column.number_format, n in wrapped)
                          for n, (column, value) in enumerate(zip(table.columns, row,
                                                                  strict=True), 1)])
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


def _reference_cell(sheet: Any, value: Any, number_format: str | None, wrap: bool) -> Any:
    if isinstance(value, str):
        cell = WriteOnlyCell(sheet, value=cell_text(value))
        cell.data_type = "s"
    else:
        cell = WriteOnlyCell(sheet, value=value)
        if number_format and value is not None:
            cell.number_format = number_format
    if wrap:
        cell.alignment = Alignment(wrap_text=True, vertical="top")
    return cell


def _cells(book: Any) -> dict[str, Any]:
    """Every sheet's layout and every cell's value, type, format and style, read back."""
    found: dict[str, Any] = {}
    for sheet in book:
        widths = {letter: d.width for letter, d in sheet.column_dimensions.items()}
        found[sheet.title] = (sheet.freeze_panes, sheet.auto_filter.ref, widths, [
            [(c.value, c.data_type, c.number_format, c.font.b, c.fill.fgColor.rgb,
              c.border.bottom.style, c.alignment.wrap_text, c.alignment.vertical)
             for c in row] for row in sheet.iter_rows()])
    return found


def test_the_workbook_is_cell_for_cell_the_from_scratch_workbook(
    session: Session, study: Study
) -> None:
    study_id = study.id or 0
    book = load_workbook(io.BytesIO(_export(session, study, ExportFormat.XLSX)))
    exported_at = book["About"]["B5"].value  # the moment of the download, to the second
    assert abs(datetime.now(UTC).replace(tzinfo=None) - exported_at).total_seconds() < 60
    tree, data = load_study_tree(session, study_id), export_study(session, study_id)
    revision = f"{working_copy_label(session, study_id)}: working copy, not signed"
    tables = [cover_table(data["study"], cautions=CAUTIONS, exported_at=exported_at,
                          revision=revision),
              *all_tables(tree, data), *audit_tables(tree),
              *round_tables(data, file_ref_numbers(tree))]
    reference = load_workbook(io.BytesIO(_openpyxl_workbook(tables)))
    assert book.sheetnames == reference.sheetnames
    assert _cells(book) == _cells(reference)
    assert (book.properties.title, book.properties.creator) == (study.title, "Tallyroom")
