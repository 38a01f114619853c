"""The tables every spreadsheet-like export shares, built from a loaded study.

Cells keep their types (text, number, date) so writers can format numbers as numbers; text is
made spreadsheet-safe by the writers, not here, so the PDF shows it exactly as typed.

Tables other than scenarios and steps read the exported study file as a plain dict (`StudyData`),
not a validated StudyFile: an export must never fail because stored text is longer than the file
format allows on import.
"""

from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass
from datetime import UTC, date, datetime
from functools import lru_cache
from typing import Any

from sqlmodel import Session

from app.likelihood.numbers import format_number, format_orders, format_rrf
from app.likelihood.types import DemandMode, Receptor, StepKind
from app.likelihood.typical import typical_by_key
from app.services.exchange.export_source import (
    ExportScenario,
    deviation_words,
    node_words,
    stored_scenarios,
    tree_scenarios,
)
from app.services.exchange.study_file import scenario_ref
from app.services.study.table_figures import TableFigures, TableResult, TableSpread
from app.services.study.tree import DeviationBranch, NodeBranch, StudyTree

Cell = str | float | int | date | datetime | None
StudyData = dict[str, Any]

# The spreadsheet shows each number as the screen does: two significant figures for
# frequencies, probabilities and ratios, a signed tenth for a gap in orders, a whole RRF with
# thousands separators. The cell holds the exact value; the CSV writes the shown text.
SCIENTIFIC = "0.0E+0"
SIGNED = "+0.0;-0.0;+0.0"
WHOLE = "0"
RRF = "#,##0"
DAY = "yyyy-mm-dd"
MOMENT = "yyyy-mm-dd hh:mm:ss"

# Spreadsheet programs run a cell typed with one of these first characters as a formula
# (OWASP, CSV Injection; common practice: prefix such text with a single quote).
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")

DEMAND_LABELS = {DemandMode.LOW: "low demand", DemandMode.HIGH: "high demand / continuous"}


@dataclass(frozen=True)
class Column:
    """A column: its header and, for numbers and dates, the spreadsheet number format."""

    header: str
    number_format: str | None = None


@dataclass(frozen=True)
class Table:
    """A titled table of typed cells, one list per row, in column order."""

    title: str
    columns: tuple[Column, ...]
    rows: list[list[Cell]]


SHOWN_AS: dict[str, Callable[[float], str]] = {
    SCIENTIFIC: format_number, SIGNED: format_orders, RRF: format_rrf,
}


def shown_number(value: float, number_format: str | None) -> str:
    """A number as the screen shows it, for a column with this spreadsheet format."""
    if number_format in SHOWN_AS:
        return SHOWN_AS[number_format](float(value))
    return str(value) if isinstance(value, int) else f"{value:.10g}"


def spreadsheet_text(text: str) -> str:
    """Text that a spreadsheet shows as text: a formula-like start gets a leading quote."""
    return "'" + text if text.startswith(FORMULA_STARTS) else text


# Issue 9: the demand on an added SIF, each receptor's line, and the figures with the credits
# the IPL checks flag withdrawn (PFD 1). Appended after the older columns.
RECEPTOR_COLUMNS = tuple(
    column
    for receptor in Receptor
    for column in (Column(f"{receptor.value.capitalize()}: mitigated (/yr)", SCIENTIFIC),
                   Column(f"{receptor.value.capitalize()}: tolerable (/yr)", SCIENTIFIC),
                   Column(f"{receptor.value.capitalize()}: ratio", SCIENTIFIC),
                   Column(f"{receptor.value.capitalize()}: SIL target"))
)
METHOD_COLUMNS = (
    Column("Demand rate on an added SIF (/yr)", SCIENTIFIC), Column("Demand formula"),
    Column("Governing receptor"), *RECEPTOR_COLUMNS, Column("Flagged credits"),
    Column("Withdrawn: mitigated (/yr)", SCIENTIFIC), Column("Withdrawn: ratio", SCIENTIFIC),
    Column("Withdrawn: SIL target"), Column("Withdrawn: status"),
)  # fmt: skip

# Issue 13: the governing line's lognormal (each entered value taken as the median; the
# log-variances of the steps' error factors add). Appended after the method columns.
UNCERTAINTY_COLUMNS = (
    Column("Median (/yr, lognormal)", SCIENTIFIC), Column("5th percentile (/yr)", SCIENTIFIC),
    Column("95th percentile (/yr)", SCIENTIFIC), Column("Mean (/yr)", SCIENTIFIC),
    Column("Scenario error factor", "0.0"), Column("P(meets target)", "0.0%"),
    Column("Verdict certainty"),
)  # fmt: skip
UNCERTAINTY_WORDS = {"meets": "meets (P >= 95 %)", "uncertain": "uncertain (5 % < P < 95 %)",
                     "misses": "misses (P <= 5 %)"}


def uncertainty_cells(spread: TableSpread | None) -> list[Cell]:
    """The governing line's median, percentiles, mean, EF, P(meets) and certainty."""
    if spread is None:
        return [*NO_SPREAD]
    return [*spread[:6], UNCERTAINTY_WORDS[spread.confidence]]


NO_SPREAD: tuple[Cell, ...] = (*[None] * (len(UNCERTAINTY_COLUMNS) - 1), "")


SCENARIO_COLUMNS = (
    Column("Scenario"), Column("Node"), Column("Deviation"), Column("Cause"),
    Column("Consequence"), Column("Governing severity"),
    Column("Tolerable frequency (/yr)", SCIENTIFIC), Column("Initiating event"),
    Column("Initiating frequency (/yr)", SCIENTIFIC), Column("Enabling product", SCIENTIFIC),
    Column("Modifier product", SCIENTIFIC), Column("Credited IPLs", WHOLE),
    Column("IPL product (PFD)", SCIENTIFIC), Column("Mitigated frequency (/yr)", SCIENTIFIC),
    Column("Ratio mitigated / tolerable", SCIENTIFIC),
    Column("Gap (orders of magnitude)", SIGNED), Column("Required RRF", RRF),
    Column("SIL target"), Column("Demand mode"), Column("Status"),
    *METHOD_COLUMNS, *UNCERTAINTY_COLUMNS,
)  # fmt: skip


def scenario_refs(tree: StudyTree) -> dict[int, str]:
    """Scenario id -> its number as the worksheet shows it (node 2, deviation 1, scenario 3:
    '2.1.3'), so every export names a scenario as the screens do."""
    numbers: dict[int, str] = {}
    for node_branch in tree.nodes:
        node_number = node_branch.node.number or "(unnumbered)"
        for d_index, deviation_branch in enumerate(node_branch.deviations, start=1):
            for s_index, item in enumerate(deviation_branch.scenarios, start=1):
                if item.scenario.id is not None:
                    numbers[item.scenario.id] = f"{node_number}.{d_index}.{s_index}"
    return numbers


def file_ref_numbers(tree: StudyTree) -> dict[str, str]:
    """The study file's scenario refs (S1, S2, ...) -> the worksheet's numbers."""
    numbers = scenario_refs(tree)
    return {scenario_ref(i): numbers.get(s.scenario.id or 0, scenario_ref(i))
            for i, s in enumerate(tree.scenario_branches())}


def node_label(node_branch: NodeBranch) -> str:
    """'1 · Feed drum'."""
    return node_words(node_branch.node)


def deviation_label(deviation_branch: DeviationBranch) -> str:
    """'More Level'."""
    return deviation_words(deviation_branch.deviation)


def scenario_rows(scenarios: Iterable[ExportScenario]) -> Iterator[list[Cell]]:
    """One row per scenario: what it is, its numbers and what it asks for."""
    return (scenario_row(item) for item in scenarios)


def scenario_table(tree: StudyTree) -> Table:
    """The scenario table of a computed study tree (the from-scratch path)."""
    return Table("Scenarios", SCENARIO_COLUMNS, list(scenario_rows(tree_scenarios(tree))))


def computed_figures(tree: StudyTree) -> list[dict[str, Cell]]:
    """The scenario table's rows as the JSON study file carries them, from a computed tree."""
    return figures_of_rows(scenario_table(tree).rows)


def stored_computed_figures(session: Session, study_id: int) -> list[dict[str, Cell]]:
    """computed_figures from the stored results, read one node at a time."""
    return list(stored_figure_entries(session, study_id))


def stored_figure_entries(session: Session, study_id: int) -> Iterator[dict[str, Cell]]:
    """computed_figures' entries one by one, as the stored results are read (node by node),
    so a streamed download sends them as they come."""
    return figure_entries(scenario_rows(stored_scenarios(session, study_id, with_rows=False)))


def figures_of_rows(rows: Iterable[list[Cell]]) -> list[dict[str, Cell]]:
    """Scenario rows as the JSON study file carries them (see figure_entries)."""
    return list(figure_entries(rows))


def figure_entries(rows: Iterable[list[Cell]]) -> Iterator[dict[str, Cell]]:
    """Scenario rows as the JSON study file carries them: exact values (the CSV rounds them as
    the screen shows them), keyed by the CSV's headers and the file ref (S1, S2, ... in
    worksheet order)."""
    keys = ("ref", *(column.header for column in SCENARIO_COLUMNS))
    return (dict(zip(keys, (scenario_ref(index), *row), strict=True))  # one dict, not two
            for index, row in enumerate(rows))


def scenario_row(item: ExportScenario) -> list[Cell]:
    """One scenario's row of the scenario table."""
    scenario, category, figures = item.scenario, item.category, item.figures
    result, credited = figures.result, figures.credited_ipls
    head: list[Cell] = [
        item.number, item.node_label, item.deviation_label, scenario.cause,
        scenario.consequence, category.name if category else "",
        category.tolerable_frequency if category else None,
        figures.initiating_description, figures.initiating_value,
    ]
    if result is None:
        return [*head, None, None, credited, None, None, None, None, None, "", "",
                item.no_figures_words, *NO_METHOD, *NO_SPREAD]
    return [
        *head, result.enabling_product, result.modifier_product, credited,
        result.ipl_product, result.mitigated_frequency, result.ratio, result.gap_orders,
        result.required_rrf_cell, result.sil_label, DEMAND_LABELS[DemandMode(result.demand_mode)],
        STATUS[result.meets_target], *_method_cells(item.figures, result),
        *uncertainty_cells(item.figures.spread),
    ]


STATUS = {True: "meets target", False: "short of target"}
NO_METHOD: tuple[Cell, ...] = (None,) * len(METHOD_COLUMNS)
NOT_RATED: tuple[Cell, ...] = (None, None, None, "not rated")


def _method_cells(figures: TableFigures, result: TableResult) -> list[Cell]:
    """Demand, governing receptor, each receptor's line, then the withdrawn figures."""
    lines = {line.receptor: line for line in figures.lines}
    cells: list[Cell] = [result.demand_rate, result.demand_formula, result.governing]
    for receptor in RECEPTOR_VALUES:
        line = lines.get(receptor)
        cells += line[1:] if line else NOT_RATED
    withdrawn = figures.withdrawn
    if withdrawn is None:
        return [*cells, "", None, None, "", ""]
    return [*cells, "; ".join(figures.withdrawn_labels), withdrawn.mitigated_frequency,
            withdrawn.ratio, withdrawn.sil_label, STATUS[withdrawn.meets_target]]


RECEPTOR_VALUES = tuple(receptor.value for receptor in Receptor)


STEP_COLUMNS = (
    Column("Scenario"), Column("Node"), Column("Step"), Column("Kind"), Column("Description"),
    Column("Value", SCIENTIFIC), Column("As written"), Column("Credited"), Column("IPL type"),
    Column("System tag"), Column("SIL claimed", WHOLE), Column("Response time (min)", "0.#"),
    Column("Basis"), Column("Typical-value row and source"),
    Column("Error factor (EF)", "0.0"), Column("EF source"),
)  # fmt: skip


def step_rows(item: ExportScenario) -> Iterator[list[Cell]]:
    """One row per step of one scenario, with the scenario's number, its EF and the EF's
    source (blank when the scenario has no figures)."""
    factors = {factor.step_id: factor for factor in item.figures.step_factors}
    for number, step in enumerate(item.steps, 1):
        factor = factors.get(step.id)
        yield [item.number, item.node_label, number, KIND_LABELS[step.kind], step.description,
               step.value, step.value_text, "yes" if step.credited else "no",
               step.ipl_type or "", step.system_tag, step.sil_claimed,
               step.response_time_minutes, step.basis, typical_words(step.typical_key),
               *((None, "") if factor is None else factor[1:])]


KIND_LABELS = {kind: kind.label for kind in StepKind}


def step_table(tree: StudyTree) -> Table:
    """One row per step of every scenario (from a computed tree)."""
    return Table("Steps", STEP_COLUMNS,
                 [row for item in tree_scenarios(tree) for row in step_rows(item)])


@lru_cache(maxsize=1_024)  # a few catalogue rows, repeated down a study's steps
def typical_words(key: str | None) -> str:
    """'BPCS loop, independent of the cause: 0.01 to 0.1; CCPS … [verify against your copy]'."""
    row = typical_by_key(key) if key else None
    if row is None:
        return ""
    marker = " [verify against your copy]" if row.verify_against_copy else ""
    return (f"{row.label}: {format_number(row.low)} to {format_number(row.high)}; "
            f"{row.citation or row.source}{marker}")


ACTION_COLUMNS = (
    Column("No."), Column("Action"), Column("Owner"), Column("Due", DAY), Column("Status"),
    Column("Status reason"), Column("Expected RRF", RRF), Column("Scenarios"),
)  # fmt: skip


def action_table(data: StudyData, numbers: dict[str, str] | None = None) -> Table:
    """The recommendations with the scenarios they address (by the worksheet's numbers when
    `numbers` maps the file's refs to them)."""
    named = numbers or {}
    rows: list[list[Cell]] = [
        [f"A{number}", a["text"], a["owner"], _day(a["due_date"]),
         a["status"].replace("_", " "), a["status_reason"], a["expected_rrf"],
         ", ".join(named.get(ref, ref) for ref in a["scenarios"])]
        for number, a in enumerate(data["recommendations"], 1)
    ]
    return Table("Actions", ACTION_COLUMNS, rows)


def criteria_table(data: StudyData) -> Table:
    """The severity categories and their tolerable frequencies."""
    columns = (Column("Category"), Column("Receptor"),
               Column("Tolerable frequency (/yr)", SCIENTIFIC), Column("Description"))
    rows: list[list[Cell]] = [
        [c["name"], c["receptor"], c["tolerable_frequency"], c["description"]]
        for c in data["severity_categories"]
    ]
    return Table("Criteria", columns, rows)


def attendance_table(data: StudyData) -> Table:
    """Participants down, session dates across; 'present' where they attended."""
    days = data["session_days"]
    columns = (Column("Participant"), Column("Role"), Column("Discipline"), Column("Company"),
               *(Column(day["day"]) for day in days))
    rows: list[list[Cell]] = [
        [p["name"], p["role"], p["discipline"], p["company"],
         *("present" if p["ref"] in day["attendees"] else "" for day in days)]
        for p in data["participants"]
    ]
    return Table("Attendance", columns, rows)


LOG_COLUMNS = (
    Column("When (UTC)", MOMENT), Column("Author"), Column("Action"), Column("Item"),
    Column("Field"), Column("Old value"), Column("New value"), Column("Summary"),
    Column("Scenario"),
)  # fmt: skip


def change_log_table(data: StudyData, numbers: dict[str, str] | None = None) -> Table:
    """Every recorded change, oldest first."""
    named = numbers or {}
    rows: list[list[Cell]] = [
        [utc_naive(datetime.fromisoformat(e["at"])), e["author"], e["action"], e["entity"],
         e["field"], e["old_value"], e["new_value"], e["summary"],
         named.get(e["scenario"], e["scenario"]) if e["scenario"] else ""]
        for e in data.get("change_log", [])
    ]
    return Table("Change log", LOG_COLUMNS, rows)


def utc_naive(moment: datetime) -> datetime:
    """A timestamp in UTC without its zone (spreadsheets have no time zones)."""
    return moment.astimezone(UTC).replace(tzinfo=None) if moment.tzinfo else moment


def _day(text: str | None) -> date | None:
    return date.fromisoformat(text) if text else None


def all_tables(tree: StudyTree, data: StudyData) -> Sequence[Table]:
    """Every table of the workbook after the cover, in sheet order."""
    return (scenario_table(tree), step_table(tree), action_table(data, file_ref_numbers(tree)),
            criteria_table(data),
            attendance_table(data), change_log_table(data, file_ref_numbers(tree)))
