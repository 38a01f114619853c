"""The auditor's sheets: steps with basis and typical row, safeguards not credited, notes,
warnings with sources, added functions; the About sheet's revision; widths that fit; the
cautions in the CSV and the JSON."""

import io
import json
from datetime import date
from typing import Any

from openpyxl import load_workbook
from sqlmodel import Session

from app.db.models import Study
from app.likelihood.types import SilStatus
from app.routes.rendering import CAUTIONS, templates
from app.services.exchange.export_tables import scenario_refs
from app.services.exchange.exports import ExportFormat, build_export
from app.services.exchange.study_import import import_study_text
from app.services.record.revisions import freeze_revision
from app.services.risk.ipl_checks import scenario_warnings
from app.services.study.tree import load_study_tree


def _export(session: Session, study: Study, export_format: ExportFormat) -> bytes:
    return build_export(session=session, study_id=study.id or 0, export_format=export_format,
                        env=templates.env).content


def _records(book: Any, name: str) -> list[dict[str, Any]]:
    rows = list(book[name].iter_rows(values_only=True))
    return [dict(zip(rows[0], row, strict=True)) for row in rows[1:]]


def test_the_new_sheets_hold_what_the_study_holds(session: Session, demo_study: Study) -> None:
    tree = load_study_tree(session, demo_study.id or 0)
    numbers = scenario_refs(tree)
    book = load_workbook(io.BytesIO(_export(session, demo_study, ExportFormat.XLSX)))
    steps = _records(book, "Steps")
    all_steps = [s for item in tree.scenario_branches() for s in item.steps]
    assert [r["Basis"] or "" for r in steps] == [s.basis for s in all_steps]
    assert [r["Value"] for r in steps] == [s.value for s in all_steps]  # numbers, not text
    picked = [r for r, s in zip(steps, all_steps, strict=True) if s.typical_key]
    assert picked and all("CCPS" in r["Typical-value row and source"] or
                          "IEC" in r["Typical-value row and source"] or
                          "Cox" in r["Typical-value row and source"] or
                          "common practice" in r["Typical-value row and source"]
                          for r in picked)
    safeguards = _records(book, "Safeguards")
    expected = [(numbers[i.scenario.id or 0], s.description)
                for i in tree.scenario_branches() for s in i.safeguards]
    assert [(r["Scenario"], r["Safeguard"]) for r in safeguards] == expected
    assert {r["Credited"] for r in safeguards} == {"no (not an IPL)"}
    warnings = _records(book, "Warnings")
    raised = [(numbers[i.scenario.id or 0], w.message)
              for i in tree.scenario_branches() for w in scenario_warnings(i)]
    assert [(r["Scenario"], r["Warning"]) for r in warnings] == raised and raised
    assert all(r["Source"] for r in warnings)
    functions = _records(book, "Added functions")
    needing = [i for i in tree.scenario_branches() if i.outcome.result is not None
               and i.outcome.result.sil_target.status is not SilStatus.NONE_NEEDED]
    assert len(functions) == len(needing) > 0
    for row, item in zip(functions, needing, strict=True):
        result = item.outcome.result
        assert result is not None
        assert row["Scenario served"].startswith(numbers[item.scenario.id or 0] + " ")
        assert row["Required RRF"] == result.sil_target.required_rrf
        assert row["Required SIL"] == result.sil_target.label
    notes = _records(book, "Notes")
    assert [r["Notes"] for r in notes] == [
        i.scenario.notes for i in tree.scenario_branches() if i.scenario.notes.strip()]


def _shown(cell: Any) -> int:
    """The characters a spreadsheet shows for the cell, written out by format here."""
    value, shape = cell.value, cell.number_format
    if isinstance(value, date):  # openpyxl reads every date back as a datetime: ask the format
        return len("2026-11-12 15:30:00") if "hh" in shape else len("2026-11-12")
    if isinstance(value, int | float):
        if "E" in shape:
            return len(f"{value:.2E}")
        if shape == "#,##0.0":
            return len(f"{value:,.1f}")
        if shape.startswith("+"):
            return len(f"{value:+.2f}")
        return len(str(value)) if isinstance(value, int) else len(f"{value:.10g}")
    return max((len(line) for line in str(value).splitlines()), default=0)


def test_every_column_is_as_wide_as_its_longest_cell_within_reason(
    session: Session, demo_study: Study
) -> None:
    """Within reason: at least the longest cell (capped at 80 characters, where text wraps),
    and no more than 2 characters wider than it (or the 8-character minimum)."""
    session.info["author"] = "Auditor"
    freeze_revision(session=session, study_id=demo_study.id or 0,
                    values={"label": "Rev A", "signed_off_by": "Dana Whitlock", "note": ""},
                    frozen_by="Auditor")
    book = load_workbook(io.BytesIO(_export(session, demo_study, ExportFormat.XLSX)))
    for sheet in book.worksheets:
        for column in sheet.iter_cols():
            longest = max(_shown(c) for c in column if c.value is not None)
            width = sheet.column_dimensions[column[0].column_letter].width
            assert min(longest, 78) <= width <= max(8, min(longest, 78) + 2), (
                sheet.title, column[0].value, longest, width)
    about = {r[0]: r[1] for r in book["About"].iter_rows(min_row=2, values_only=True)}
    assert about["Revision"] == "working copy since Rev A: working copy, not signed"
    assert about["Cautions"] == CAUTIONS


def test_the_json_carries_the_cautions_and_still_imports(
    session: Session, demo_study: Study
) -> None:
    data = json.loads(_export(session, demo_study, ExportFormat.JSON))
    assert data["cautions"] == CAUTIONS
    copy = import_study_text(session, json.dumps(data))
    # The title exists already, so the copy is told apart by its import date (issue 15).
    assert copy.title.startswith(f"{demo_study.title} (imported ")
