"""The study's workbook, written in one pass over its scenarios.

The scenario-by-scenario sheets (Scenarios, Steps, Safeguards, Notes, Warnings, Added
functions) fill together as `stored_scenarios` reads the study one node at a time; the sheets
of the study file's other parts (actions, criteria, attendance, change log, rounds) follow from
`export_study` without its nodes. Each sheet's rows go straight to a temporary file
(`export_xlsx.WorkbookWriter`), so the server never holds the study's cells.
"""

from datetime import datetime
from typing import IO

from sqlmodel import Session

from app.services.exchange.export_audit_tables import AUDIT_SHEETS
from app.services.exchange.export_rounds import StepWords, round_tables, step_words
from app.services.exchange.export_source import ExportScenario, stored_scenarios
from app.services.exchange.export_tables import (
    SCENARIO_COLUMNS,
    STEP_COLUMNS,
    action_table,
    attendance_table,
    change_log_table,
    criteria_table,
    scenario_row,
    step_rows,
)
from app.services.exchange.export_xlsx import WorkbookWriter, cover_table
from app.services.exchange.study_file import export_study, scenario_ref


def write_study_workbook(session: Session, study_id: int, target: IO[bytes], *, cautions: str,
                         exported_at: datetime, revision: str) -> None:
    """The whole workbook of the live study into `target` (an open binary file)."""
    data = export_study(session, study_id, with_nodes=False)
    workbook = WorkbookWriter()
    workbook.table(cover_table(data["study"], cautions=cautions, exported_at=exported_at,
                               revision=revision))
    scenarios, steps = (workbook.sheet("Scenarios", SCENARIO_COLUMNS),
                        workbook.sheet("Steps", STEP_COLUMNS))
    audit = [(workbook.sheet(title, columns), rows_of) for title, columns, rows_of in
             AUDIT_SHEETS]
    asked = {r["scenario"] for r in data.get("estimate_rounds", []) if r.get("scenario")}
    numbers: dict[str, str] = {}
    named: dict[tuple[str, int], str] = {}
    for item in stored_scenarios(session, study_id):
        ref = scenario_ref(len(numbers))
        numbers[ref] = item.number
        scenarios.append(scenario_row(item))
        steps.extend(step_rows(item))
        for sheet, rows_of in audit:
            sheet.extend(rows_of(item))
        if ref in asked:
            named.update(_asked_steps(ref, item))
    after_steps = (action_table(data, numbers), criteria_table(data), attendance_table(data),
                   change_log_table(data, numbers))
    for offset, table in enumerate(after_steps):
        workbook.table(table, at=3 + offset)  # About, Scenarios, Steps, then these
    for table in round_tables(data, numbers, named):
        workbook.table(table)
    workbook.save(target, title=data["study"]["title"], creator="Tallyroom",
                  created=exported_at)


def _asked_steps(ref: str, item: ExportScenario) -> StepWords:
    """The words of each step of a scenario that an estimate round asks about."""
    return {(ref, place): step_words(str(step.kind.value), step.description)
            for place, step in enumerate(item.steps, 1)}
