"""The tables an auditor reads beside the numbers: safeguards not credited, scenario notes, IPL
warnings with their sources, and the safety functions the gaps ask for.

Kept apart from export_tables.py (the scenario and step columns) so each grows on its own.
"""

from collections.abc import Callable
from dataclasses import dataclass

from app.likelihood.check_base import CheckWarning
from app.likelihood.types import DemandMode
from app.services.exchange.export_source import ExportScenario, tree_scenarios
from app.services.exchange.export_tables import (
    DEMAND_LABELS,
    RRF,
    SCIENTIFIC,
    Cell,
    Column,
    Table,
)
from app.services.study.table_figures import TableWarning
from app.services.study.tree import StudyTree

VERIFY_MARKER = " [verify against your copy]"


@dataclass(frozen=True)
class AddedFunction:
    """A safety function a scenario's gap asks for: its target, mode and the scenario served."""

    scenario: str
    target: str
    mode: str
    demand_rate: float | None
    required_rrf: float
    required_pfd: float | None
    required_pfh: float | None


def warning_source(warning: CheckWarning | TableWarning) -> str:
    """The warning's citation, with the marker when it still needs checking."""
    text = warning.citation if isinstance(warning, TableWarning) else (
        warning.citation or warning.source)
    return text + VERIFY_MARKER if warning.verify_against_copy else text


def added_functions(tree: StudyTree) -> list[AddedFunction]:
    """Every scenario whose gap asks for an added safety function, in worksheet order."""
    return [f for item in tree_scenarios(tree) if (f := added_function(item)) is not None]


def added_function(item: ExportScenario) -> AddedFunction | None:
    """The safety function one scenario's gap asks for (None: none needed, or no figures)."""
    result = item.figures.result
    if result is None or not result.needs_function:
        return None
    return AddedFunction(
        f"{item.number} {item.scenario.cause}".strip(), result.sil_label,
        DEMAND_LABELS[DemandMode(result.demand_mode)], result.demand_rate,
        result.required_rrf, result.required_pfd, result.required_pfh)


FUNCTION_COLUMNS = (
    Column("Scenario served"), Column("Required SIL"), Column("Demand mode"),
    Column("Demand rate (/yr)", SCIENTIFIC), Column("Required RRF", RRF),
    Column("Required PFDavg", SCIENTIFIC), Column("Required PFH (/h)", SCIENTIFIC),
)  # fmt: skip
WARNING_COLUMNS = (Column("Scenario"), Column("Step"), Column("Check"), Column("Warning"),
                   Column("Source"), Column("Doubts the credit"))
SAFEGUARD_COLUMNS = (Column("Scenario"), Column("Safeguard"), Column("Note"), Column("Credited"))
NOTE_COLUMNS = (Column("Scenario"), Column("Cause"), Column("Notes"))


def function_rows(item: ExportScenario) -> list[list[Cell]]:
    """The scenario's added safety function as a row (none when it asks for none)."""
    f = added_function(item)
    return [] if f is None else [[f.scenario, f.target, f.mode, f.demand_rate,
                                  f.required_rrf, f.required_pfd, f.required_pfh]]


def warning_rows(item: ExportScenario) -> list[list[Cell]]:
    """Every IPL-check warning of one scenario with its step, rule, sentence and source."""
    return [[item.number, w.step_label, w.rule.replace("_", " "), w.message,
             warning_source(w), "yes" if w.withdraws_credit else "no"]
            for w in item.figures.warnings]


def safeguard_rows(item: ExportScenario) -> list[list[Cell]]:
    """Safeguards the team listed on one scenario but did not credit as IPLs."""
    return [[item.number, s.description, s.note, "no (not an IPL)"] for s in item.safeguards]


def note_rows(item: ExportScenario) -> list[list[Cell]]:
    """The scenario's notes (no row when it has none)."""
    scenario = item.scenario
    return [[item.number, scenario.cause, scenario.notes]] if scenario.notes.strip() else []


AUDIT_SHEETS: tuple[tuple[str, tuple[Column, ...], Callable[[ExportScenario],
                                                            list[list[Cell]]]], ...] = (
    ("Safeguards", SAFEGUARD_COLUMNS, safeguard_rows), ("Notes", NOTE_COLUMNS, note_rows),
    ("Warnings", WARNING_COLUMNS, warning_rows),
    ("Added functions", FUNCTION_COLUMNS, function_rows),
)
"""The auditor's sheets in workbook order: title, columns and each scenario's rows."""


def audit_tables(tree: StudyTree) -> tuple[Table, ...]:
    """The auditor's sheets of a computed study tree (the from-scratch path)."""
    items = list(tree_scenarios(tree))
    return tuple(Table(title, columns, [row for item in items for row in rows_of(item)])
                 for title, columns, rows_of in AUDIT_SHEETS)
