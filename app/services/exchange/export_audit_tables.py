"""The tables an auditor reads beside the numbers: safeguards not credited, scenario notes, IPL
warnings with their sources, and the safety functions the gaps ask for.

Kept apart from export_tables.py (the scenario and step columns) so each grows on its own.
"""

from dataclasses import dataclass

from app.likelihood.check_base import CheckWarning
from app.likelihood.types import SilStatus
from app.services.exchange.export_tables import (
    DEMAND_LABELS,
    RRF,
    SCIENTIFIC,
    Cell,
    Column,
    Table,
    scenario_refs,
)
from app.services.risk.ipl_checks import scenario_warnings
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


def warning_source(warning: CheckWarning) -> str:
    """The warning's citation, with the marker when it still needs checking."""
    text = warning.citation or warning.source
    return text + VERIFY_MARKER if warning.verify_against_copy else text


def added_functions(tree: StudyTree) -> list[AddedFunction]:
    """Every scenario whose gap asks for an added safety function, in worksheet order."""
    numbers = scenario_refs(tree)
    found = []
    for item in tree.scenario_branches():
        result = item.outcome.result
        if result is None or result.sil_target.status is SilStatus.NONE_NEEDED:
            continue
        target = result.sil_target
        found.append(AddedFunction(
            f"{numbers[item.scenario.id or 0]} {item.scenario.cause}".strip(), target.label,
            DEMAND_LABELS[target.demand_mode],
            result.demand.demand_rate_per_year if result.demand else None,
            target.required_rrf, target.required_pfd, target.required_pfh))
    return found


FUNCTION_COLUMNS = (
    Column("Scenario served"), Column("Required SIL"), Column("Demand mode"),
    Column("Demand rate (/yr)", SCIENTIFIC), Column("Required RRF", RRF),
    Column("Required PFDavg", SCIENTIFIC), Column("Required PFH (/h)", SCIENTIFIC),
)  # fmt: skip


def function_table(tree: StudyTree) -> Table:
    """One row per added safety function."""
    rows: list[list[Cell]] = [
        [f.scenario, f.target, f.mode, f.demand_rate, f.required_rrf, f.required_pfd,
         f.required_pfh] for f in added_functions(tree)]
    return Table("Added functions", FUNCTION_COLUMNS, rows)


def warning_table(tree: StudyTree) -> Table:
    """Every IPL-check warning with its scenario, step, rule, sentence and source."""
    numbers = scenario_refs(tree)
    columns = (Column("Scenario"), Column("Step"), Column("Check"), Column("Warning"),
               Column("Source"), Column("Doubts the credit"))
    rows: list[list[Cell]] = [
        [numbers[item.scenario.id or 0], w.step_label, w.rule.replace("_", " "), w.message,
         warning_source(w), "yes" if w.withdraws_credit else "no"]
        for item in tree.scenario_branches() for w in scenario_warnings(item)]
    return Table("Warnings", columns, rows)


def safeguard_table(tree: StudyTree) -> Table:
    """Safeguards the team listed but did not credit as IPLs."""
    numbers = scenario_refs(tree)
    columns = (Column("Scenario"), Column("Safeguard"), Column("Note"), Column("Credited"))
    rows: list[list[Cell]] = [
        [numbers[item.scenario.id or 0], s.description, s.note, "no (not an IPL)"]
        for item in tree.scenario_branches() for s in item.safeguards]
    return Table("Safeguards", columns, rows)


def notes_table(tree: StudyTree) -> Table:
    """The notes written on each scenario (scenarios without notes left out)."""
    numbers = scenario_refs(tree)
    columns = (Column("Scenario"), Column("Cause"), Column("Notes"))
    rows: list[list[Cell]] = [
        [numbers[item.scenario.id or 0], item.scenario.cause, item.scenario.notes]
        for item in tree.scenario_branches() if item.scenario.notes.strip()]
    return Table("Notes", columns, rows)


def audit_tables(tree: StudyTree) -> tuple[Table, ...]:
    """The auditor's sheets, in workbook order."""
    return (safeguard_table(tree), notes_table(tree), warning_table(tree), function_table(tree))
