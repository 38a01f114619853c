"""The summary report: the study's criteria, risk picture counts, added functions, actions and
the scenarios furthest short of target, on a few pages whatever the study's size.

It reads the same study file and risk picture as the full report and prints through the same
template sections (templates/exchange/report/), but computes no ladder or per-scenario check, and
every list it prints is capped at SUMMARY_ROWS rows with a count of the rest.
"""

from dataclasses import dataclass, replace
from datetime import datetime
from enum import StrEnum
from typing import TypeVar

from jinja2 import Environment

from app.db.models import Study
from app.services.exchange.export_audit_tables import AddedFunction, added_functions
from app.services.exchange.export_tables import (
    StudyData,
    Table,
    action_table,
    criteria_table,
    file_ref_numbers,
    scenario_refs,
)
from app.services.exchange.report import Signature, overdue_actions
from app.services.risk.picture import RankedScenario, RiskPicture, build_risk_picture
from app.services.study.listing import NodeTotals, totals_of
from app.services.study.tree import StudyTree

Row = TypeVar("Row")

SUMMARY_TEMPLATE = "exchange/report/summary.html"
SUMMARY_ROWS = 50
"""The most rows any list of the summary prints (common practice, no source: two or three
pages of a table is as much as a review meeting reads)."""


class ReportKind(StrEnum):
    """Which PDF to make: every scenario in full, or the short summary."""

    FULL = "full"
    SUMMARY = "summary"


@dataclass(frozen=True)
class ShortScenario:
    """A scenario short of target as the summary lists it: its file number and its figures."""

    ref: str
    ranked: RankedScenario


@dataclass(frozen=True)
class SummaryReport:
    """Everything the summary template shows; lists are capped, `…_more` counts the rest."""

    study: Study
    session_days: tuple[str, ...]
    generated_at: datetime
    totals: NodeTotals
    criteria: Table
    actions: Table
    picture: RiskPicture
    functions: tuple[AddedFunction, ...]
    short: tuple[ShortScenario, ...]
    signature: Signature
    overdue: frozenset[str] = frozenset()
    actions_more: int = 0
    functions_more: int = 0
    short_more: int = 0
    cap: int = SUMMARY_ROWS


def _capped(rows: list[Row], cap: int) -> tuple[tuple[Row, ...], int]:
    return tuple(rows[:cap]), max(0, len(rows) - cap)


def short_of_target(tree: StudyTree, picture: RiskPicture) -> list[ShortScenario]:
    """Every computed scenario short of target, largest gap first (the picture's ranking)."""
    refs = scenario_refs(tree)
    return [ShortScenario(refs[r.scenario_id], r) for r in picture.ranked if not r.meets]


def build_summary(tree: StudyTree, data: StudyData, *, when: datetime, signature: Signature,
                  cap: int = SUMMARY_ROWS) -> SummaryReport:
    """The summary's data for a loaded study and its exported study file."""
    picture = build_risk_picture(tree)
    actions = action_table(data, file_ref_numbers(tree))
    action_rows, actions_more = _capped(actions.rows, cap)
    functions = sorted(added_functions(tree), key=lambda f: -f.required_rrf)
    function_rows, functions_more = _capped(functions, cap)
    short_rows, short_more = _capped(short_of_target(tree, picture), cap)
    return SummaryReport(
        study=tree.study, session_days=tuple(day["day"] for day in data["session_days"]),
        generated_at=when, totals=totals_of(tree.scenario_branches()),
        criteria=criteria_table(data), actions=replace(actions, rows=list(action_rows)),
        picture=picture, functions=function_rows, short=short_rows, signature=signature,
        overdue=overdue_actions(actions, when.date()), actions_more=actions_more,
        functions_more=functions_more, short_more=short_more, cap=cap,
    )


def summary_html(summary: SummaryReport, *, env: Environment) -> str:
    """The summary as an HTML document (every value escaped by the template environment)."""
    return env.get_template(SUMMARY_TEMPLATE).render(report=summary, picture=summary.picture)
