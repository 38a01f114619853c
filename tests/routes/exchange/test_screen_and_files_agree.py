"""The same scenario reads the same on the worksheet, in the CSV and in the workbook.

Frequencies and ratios with two significant figures ("1.0e-3"), a gap as a signed tenth of
an order ("+2.0"), the required RRF as a whole number with thousands separators, or "none
needed" where the scenario meets target; every scenario named by its worksheet number.
"""
# ruff: noqa: RUF001 - the multiplication sign is what the page shows

import csv
import io
from typing import Any

from fastapi.testclient import TestClient
from openpyxl import load_workbook
from sqlmodel import Session

from app.db.models import Study
from app.likelihood.numbers import format_number, format_orders, format_rrf
from app.services.study.tree import load_study_tree
from tests.helpers import figures


def _screen(client: TestClient, session: Session, study: Study) -> dict[str, dict[str, str]]:
    """Each scenario's figures as the worksheet shows them, keyed by its number."""
    shown: dict[str, dict[str, str]] = {}
    for node_branch in load_study_tree(session, study.id or 0).nodes:
        page = client.get(f"/studies/{study.id}/nodes/{node_branch.node.id}").text
        for item in node_branch.scenario_branches():
            number = page.split(f'id="scenario-{item.scenario.id}"', 1)[1].split(
                "<h4>Scenario ", 1)[1].split(" ", 1)[0].split("<", 1)[0]
            shown[number] = figures(page, item.scenario.id or 0)
    return shown


def _csv(client: TestClient, study: Study) -> dict[str, dict[str, str]]:
    text = client.get(f"/studies/{study.id}/export.csv").content.decode("utf-8-sig")
    rows = list(csv.reader(io.StringIO(text, newline="")))
    return {row[0]: dict(zip(rows[0], row, strict=True)) for row in rows[1:-1]}


def _sheet(client: TestClient, study: Study) -> dict[str, dict[str, Any]]:
    book = load_workbook(io.BytesIO(client.get(f"/studies/{study.id}/export.xlsx").content))
    rows = list(book["Scenarios"].iter_rows())
    headers = [cell.value for cell in rows[0]]
    return {str(row[0].value): dict(zip(headers, row, strict=True)) for row in rows[1:]}


def test_every_scenario_reads_the_same_on_screen_in_the_csv_and_in_the_workbook(
    client: TestClient, session: Session, demo_study: Study
) -> None:
    screen, files, sheet = (_screen(client, session, demo_study), _csv(client, demo_study),
                            _sheet(client, demo_study))
    assert set(screen) == set(files) == set(sheet) and len(screen) >= 15
    met = 0
    for number, shown in screen.items():
        row, cells = files[number], sheet[number]
        assert shown["mitigated"] == f"{row['Mitigated frequency (/yr)']} /yr"
        assert shown["gap"] == (f"× {row['Ratio mitigated / tolerable']} · "
                                f"{row['Gap (orders of magnitude)']} orders")
        assert shown["rrf"] == row["Required RRF"]
        assert shown["sil"] == row["SIL target"]
        # The workbook keeps the exact number under a format that shows the same digits.
        mitigated = cells["Mitigated frequency (/yr)"]
        assert format_number(mitigated.value) == row["Mitigated frequency (/yr)"]
        assert mitigated.number_format == "0.0E+0"
        gap = cells["Gap (orders of magnitude)"]
        assert format_orders(gap.value) == row["Gap (orders of magnitude)"]
        rrf = cells["Required RRF"]
        if row["Required RRF"] == "none needed":
            met += 1
            assert rrf.value == "none needed"
        else:
            assert format_rrf(rrf.value) == row["Required RRF"]
            assert rrf.number_format == "#,##0"
    assert 0 < met < len(screen)  # the demo has scenarios on both sides of the target


def test_an_rrf_above_a_thousand_has_a_thousands_separator() -> None:
    # By hand: 1.0e-2 /yr against 1.0e-5 /yr asks for a reduction of 1,000.
    assert format_rrf(1e-2 / 1e-5) == "1,000"
    assert format_rrf(12_345.6) == "12,346"


def test_the_json_file_keeps_the_exact_figures_the_csv_rounds_and_imports_without_them(
    client: TestClient, session: Session, demo_study: Study
) -> None:
    response = client.get(f"/studies/{demo_study.id}/export.json")
    data = response.json()
    rows, files = data["computed_figures"], _csv(client, demo_study)
    assert {row["Scenario"] for row in rows} == set(files)
    assert [row["ref"] for row in rows] == [f"S{i}" for i in range(1, len(rows) + 1)]
    for row in rows:
        shown = files[row["Scenario"]]
        if row["Mitigated frequency (/yr)"] is None:
            assert shown["Mitigated frequency (/yr)"] == ""
            continue
        # By hand: the product of the file's own inputs, and the CSV is the same value rounded.
        steps = next(s for s in _file_scenarios(data) if s["ref"] == row["ref"])["steps"]
        product = 1.0
        for step in steps:
            if step["kind"] != "ipl" or step.get("credited"):
                product *= step["value"] if step["kind"] != "conditional_modifier" else 1.0
        if not _has_modifiers(steps):
            assert abs(row["Mitigated frequency (/yr)"] - product) <= 1e-12 * product
        assert format_number(row["Mitigated frequency (/yr)"]) == shown[
            "Mitigated frequency (/yr)"]
        assert format_orders(row["Gap (orders of magnitude)"]) == shown[
            "Gap (orders of magnitude)"]
        if isinstance(row["Required RRF"], float):
            assert format_rrf(row["Required RRF"]) == shown["Required RRF"]
    # The file still imports: the figures are read, never stored; they are recomputed.
    again = client.post("/studies/import", follow_redirects=False, files={
        "study_file": ("s.json", response.content, "application/json")})
    assert again.status_code == 303


def _file_scenarios(data: dict[str, Any]) -> list[dict[str, Any]]:
    return [scenario for node in data["nodes"] for deviation in node["deviations"]
            for scenario in deviation["scenarios"]]


def _has_modifiers(steps: list[dict[str, Any]]) -> bool:
    return any(step["kind"] == "conditional_modifier" for step in steps)
