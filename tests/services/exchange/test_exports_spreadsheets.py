"""The workbook and the CSV: the app's own numbers as real numbers, text that cannot run."""

import csv
import io
from typing import Any

import pytest
from jinja2 import Environment
from openpyxl import load_workbook
from openpyxl.worksheet.worksheet import Worksheet
from sqlmodel import Session

from app.db.models import Study
from app.routes.rendering import CAUTIONS, templates
from app.services.exchange.export_tables import (
    SCENARIO_COLUMNS,
    SCIENTIFIC,
    SIGNED,
    shown_number,
    spreadsheet_text,
)
from app.services.exchange.export_xlsx import MAX_CELL_CHARS, cell_text
from app.services.exchange.exports import ExportFormat, build_export
from app.services.study.tree import load_study_tree
from tests.samples import (
    FORMULA_TEXTS,
    LONG_TEXT,
    MARKUP,
    SCRIPTS,
    make_hostile_study,
)

ENV: Environment = templates.env
HEADERS = [c.header for c in SCENARIO_COLUMNS]
# openpyxl writes 16 significant digits ("%.16g"); a double can need 17, so the last one may
# differ by one unit. Excel itself works to 15 digits.
SAME = 1e-15


def workbook_of(session: Session, study: Study) -> Any:
    """The study's .xlsx export, read back with openpyxl."""
    export = build_export(session=session, study_id=study.id or 0,
                          export_format=ExportFormat.XLSX, env=ENV)
    return load_workbook(io.BytesIO(export.content))


def csv_rows(session: Session, study: Study) -> list[list[str]]:
    """The study's .csv export, decoded and parsed."""
    export = build_export(session=session, study_id=study.id or 0,
                          export_format=ExportFormat.CSV, env=ENV)
    assert export.content.startswith(b"\xef\xbb\xbf")  # UTF-8 byte-order mark
    rows = list(csv.reader(io.StringIO(export.content.decode("utf-8-sig"), newline="")))
    assert rows[-1] == ["Cautions", CAUTIONS]  # the file's last row carries the cautions
    return rows[:-1]


def sheet_records(sheet: Worksheet) -> list[dict[str, Any]]:
    """Each row below the header as {header: cell}."""
    rows = list(sheet.iter_rows(values_only=True))
    return [dict(zip(rows[0], row, strict=True)) for row in rows[1:]]


def test_the_workbook_has_our_sheets_with_frozen_headers(
    session: Session, demo_study: Study
) -> None:
    book = workbook_of(session, demo_study)
    assert book.sheetnames == ["About", "Scenarios", "Steps", "Actions", "Criteria",
                               "Attendance", "Change log", "Safeguards", "Notes", "Warnings",
                               "Added functions", "Estimate rounds", "Estimates", "Word scale"]
    assert [book[name].freeze_panes for name in book.sheetnames] == ["A2", "B2", *["A2"] * 12]
    assert [c.value for c in book["Scenarios"][1]] == HEADERS
    about = {row[0]: row[1] for row in book["About"].iter_rows(min_row=2, values_only=True)}
    assert about["Study"] == demo_study.title and about["Cautions"] == CAUTIONS
    widths = [book["Scenarios"].column_dimensions[letter].width for letter in "ADEN"]
    assert widths[0] < widths[1]
    assert min(widths) >= 8 and max(widths) <= 80


def test_scenario_numbers_are_the_apps_own_results_as_real_numbers(
    session: Session, demo_study: Study
) -> None:
    tree = load_study_tree(session, demo_study.id or 0)
    records = sheet_records(workbook_of(session, demo_study)["Scenarios"])
    items = tree.scenario_branches()
    assert len(records) == len(items) >= 15
    for record, item in zip(records, items, strict=True):
        result = item.outcome.result
        assert result is not None
        assert record["Cause"] == spreadsheet_text(item.scenario.cause)
        expected = {
            "Mitigated frequency (/yr)": result.mitigated_frequency,
            "Tolerable frequency (/yr)": result.tolerable_frequency,
            "Initiating frequency (/yr)": result.initiating_frequency,
            "Enabling product": result.enabling_product,
            "Modifier product": result.modifier_product,
            "IPL product (PFD)": result.ipl_product,
            "Ratio mitigated / tolerable": result.ratio,
            "Gap (orders of magnitude)": result.gap_orders,
        }
        assert {name: record[name] for name in expected} == pytest.approx(expected, rel=SAME)
        # An RRF only where the scenario is short: "none needed" where it meets target.
        assert record["Required RRF"] == (
            "none needed" if result.meets_target else pytest.approx(result.required_rrf))
        assert record["SIL target"] == result.sil_target.label
        assert record["Credited IPLs"] == sum(s.kind == "ipl" and s.credited for s in item.steps)


def test_numbers_carry_a_number_format_and_negative_gaps_stay_numbers(
    session: Session, demo_study: Study
) -> None:
    sheet = workbook_of(session, demo_study)["Scenarios"]
    gap_column = HEADERS.index("Gap (orders of magnitude)") + 1
    gaps = [row[gap_column - 1] for row in sheet.iter_rows(min_row=2)]
    assert any(cell.value < 0 for cell in gaps)  # the demo has scenarios that meet target
    # Shown as the screen shows them: a signed tenth of an order, two significant figures.
    assert {(cell.data_type, cell.number_format) for cell in gaps} == {("n", "+0.0;-0.0;+0.0")}
    mitigated = sheet.cell(row=2, column=HEADERS.index("Mitigated frequency (/yr)") + 1)
    assert (mitigated.data_type, mitigated.number_format) == ("n", "0.0E+0")


def test_the_steps_actions_and_attendance_sheets_follow_the_study_file(
    session: Session, demo_study: Study
) -> None:
    book = workbook_of(session, demo_study)
    tree = load_study_tree(session, demo_study.id or 0)
    steps = sheet_records(book["Steps"])
    assert len(steps) == sum(len(item.steps) for item in tree.scenario_branches())
    first = tree.scenario_branches()[0].steps[0]
    assert steps[0]["Scenario"] == "1.1.1"  # as the worksheet numbers it
    assert steps[0]["Value"] == pytest.approx(first.value, rel=SAME)
    actions = sheet_records(book["Actions"])
    expected = [spreadsheet_text(action.text) for action in tree.recommendations]
    assert [a["Action"] for a in actions] == expected
    attendance = list(book["Attendance"].iter_rows(values_only=True))
    assert attendance[0][:4] == ("Participant", "Role", "Discipline", "Company")
    assert all(cell in ("present", None) for row in attendance[1:] for cell in row[4:])


def test_the_csv_has_exactly_the_scenario_sheets_columns_and_values(
    session: Session, demo_study: Study
) -> None:
    rows = csv_rows(session, demo_study)
    sheet = list(workbook_of(session, demo_study)["Scenarios"].iter_rows(values_only=True))
    assert rows[0] == HEADERS
    assert len(rows) == len(sheet)
    for csv_row, sheet_row in zip(rows[1:], sheet[1:], strict=True):
        for text, cell, column in zip(csv_row, sheet_row, SCENARIO_COLUMNS, strict=True):
            if isinstance(cell, int | float):
                # The CSV writes the number rounded as the screen shows it; the sheet keeps it
                # exact under a format that shows the same digits.
                assert text == shown_number(cell, column.number_format)
                # Rounding by hand: two significant figures are within 5 %, a tenth of an
                # order within 0.05, a whole number within 0.5.
                tolerance = {SCIENTIFIC: {"rel": 0.05}, SIGNED: {"abs": 0.05}}.get(
                    column.number_format or "", {"abs": 0.5})
                assert float(text.replace(",", "")) == pytest.approx(cell, **tolerance)
            else:
                assert text == (cell or "")


def test_hostile_text_is_neutralised_in_the_workbook_and_the_csv(session: Session) -> None:
    study = make_hostile_study(session)
    records = sheet_records(workbook_of(session, study)["Scenarios"])
    rows = csv_rows(session, study)
    expected_causes = [f"'{FORMULA_TEXTS[0]}", f"'{FORMULA_TEXTS[2]}", LONG_TEXT]
    assert [r["Cause"] for r in records] == expected_causes
    assert [row[HEADERS.index("Cause")] for row in rows[1:]] == expected_causes
    assert records[0]["Consequence"] == MARKUP  # not a formula start: left as typed
    assert records[0]["Deviation"] == "'-2+3 @SUM(A1:A2)"
    assert records[1]["Consequence"] == f"{SCRIPTS['chinese']} {SCRIPTS['devanagari']}"
    # XML reads a carriage return inside text back as a line feed (XML 1.0, 2.11 End-of-Line
    # Handling); the line break, and so the meaning, stays.
    assert records[2]["Consequence"] == "'\t=1+1\n=1+1"
    assert rows[3][HEADERS.index("Consequence")] == "'\t=1+1\r=1+1"
    assert records[0]["Node"].endswith(SCRIPTS["emoji"])
    assert records[1]["Gap (orders of magnitude)"] < 0  # still a number


def test_no_text_cell_of_any_sheet_is_a_formula(session: Session) -> None:
    book = workbook_of(session, make_hostile_study(session))
    cells = [cell for sheet in book for row in sheet.iter_rows() for cell in row]
    assert cells and not [c.coordinate for c in cells if c.data_type == "f"]
    texts = [c.value for c in cells if isinstance(c.value, str)]
    assert not [t for t in texts if t.startswith(("=", "+", "-", "@", "\t", "\r"))]


@pytest.mark.parametrize(("typed", "stored"), [
    ("=HYPERLINK(\"x\")", "'=HYPERLINK(\"x\")"),
    ("plain text", "plain text"),
    ("bell\x07 and nul\x00", "bell\ufffd and nul\ufffd"),  # XML cannot hold these
    ("'already quoted", "'already quoted"),
])  # fmt: skip
def test_cell_text_is_safe_and_storable(typed: str, stored: str) -> None:
    assert cell_text(typed) == stored


def test_text_longer_than_a_cell_holds_is_cut_with_a_note() -> None:
    stored = cell_text("y" * 40_000)
    assert len(stored) == MAX_CELL_CHARS
    assert stored.endswith("see the JSON export]")
