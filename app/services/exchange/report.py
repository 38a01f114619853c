"""The printable study report: display-ready data, its HTML, and the PDF WeasyPrint makes of it."""

from collections import defaultdict
from dataclasses import dataclass, replace
from datetime import date, datetime

from jinja2 import Environment

from app.db.models import Node, Step, Study
from app.likelihood.check_base import CheckWarning
from app.likelihood.numbers import format_number
from app.services.exchange.export_audit_tables import (
    AddedFunction,
    added_functions,
    warning_source,
)
from app.services.exchange.export_rounds import (
    RoundSummary,
    round_summaries,
    word_scale_table,
)
from app.services.exchange.export_tables import (
    DEMAND_LABELS,
    StudyData,
    Table,
    action_table,
    attendance_table,
    criteria_table,
    deviation_label,
    file_ref_numbers,
    node_label,
    scenario_refs,
    typical_words,
)

# Laid out by report_layout.py; named here too, where the report is.
from app.services.exchange.report_layout import html_to_pdf as html_to_pdf
from app.services.risk.charts import GapBarInput, build_gap_bars
from app.services.risk.ipl_checks import scenario_warnings
from app.services.risk.picture import RiskPicture, build_risk_picture
from app.services.study.listing import NodeTotals, totals_of
from app.services.study.tree import ScenarioBranch, StudyTree
from app.services.worksheet.ladder import LadderBand, LadderView, build_ladder, ladder_band

REPORT_TEMPLATE = "exchange/report/study.html"
GAP_BARS_SHOWN = 50
"""Bars of the report's gap chart: the largest gaps, as many as one page holds (an A4 page
holds about 54 at the chart's scale; a longer drawing cannot break across pages and was cut
off by the page). Every scenario's gap is in its own figures in section 3."""


@dataclass(frozen=True)
class ReportStep:
    """One step as the report lists it: the value as typed and as a number, its basis, the
    typical-value row picked (with its source), and whether it is credited and why not."""

    kind: str
    description: str
    value: float | None
    """None for an incomplete scenario's initiating event (no frequency given yet)."""
    value_text: str
    credited: bool
    basis: str
    typical: str = ""
    not_credited_because: str = ""


@dataclass(frozen=True)
class RuleCount:
    """One IPL-check rule: how many warnings, in which scenarios, and its source."""

    rule: str
    count: int
    scenarios: str
    source: str


@dataclass(frozen=True)
class Signature:
    """Whose record the report is: a frozen revision's label and sign-off, or the working copy."""

    label: str
    signed_off_by: str = ""
    signed_off_at: datetime | None = None

    @property
    def footer(self) -> str:
        """The line every page's footer carries."""
        if not self.signed_off_by:
            return f"{self.label}: working copy, not signed"
        when = self.signed_off_at.strftime("%Y-%m-%d") if self.signed_off_at else "date not given"
        return f"{self.label}, signed off by {self.signed_off_by} on {when}"


@dataclass(frozen=True)
class ReportScenario:
    """One scenario with its steps, outcome and ladder (None when it cannot be computed)."""

    ref: str
    deviation: str
    item: ScenarioBranch
    steps: tuple[ReportStep, ...]
    ladder: LadderView | None
    demand_mode: str
    warnings: tuple[CheckWarning, ...] = ()
    band: LadderBand | None = None
    """The governing line's 5-95 % band on the ladder (issue 13); None without a spread."""


@dataclass(frozen=True)
class ReportNode:
    """A node and its scenarios in worksheet order."""

    label: str
    node: Node
    totals: NodeTotals
    scenarios: tuple[ReportScenario, ...]


@dataclass(frozen=True)
class Report:
    """Everything the report template shows."""

    study: Study
    session_days: tuple[str, ...]
    generated_at: datetime
    totals: NodeTotals
    criteria: Table
    attendance: Table
    actions: Table
    nodes: tuple[ReportNode, ...]
    picture: RiskPicture
    functions: tuple[AddedFunction, ...] = ()
    rules: tuple[RuleCount, ...] = ()
    overdue: frozenset[str] = frozenset()
    signature: Signature = Signature("Working copy")
    # Issue 13: every estimate round (steps' in worksheet order, then words') and the scale.
    rounds: tuple[RoundSummary, ...] = ()
    word_scale: Table | None = None


def build_report(tree: StudyTree, data: StudyData, *, when: datetime,
                 signature: Signature | None = None) -> Report:
    """The report's data for a loaded study and its exported study file."""
    refs = scenario_refs(tree)
    nodes = tuple(
        ReportNode(
            label=node_label(node_branch), node=node_branch.node,
            totals=totals_of(node_branch.scenario_branches()),
            scenarios=tuple(
                _report_scenario(refs[item.scenario.id or 0], deviation_label(d), item)
                for d in node_branch.deviations for item in d.scenarios
            ),
        )
        for node_branch in tree.nodes
    )
    return Report(
        study=tree.study, session_days=tuple(day["day"] for day in data["session_days"]),
        generated_at=when, totals=totals_of(tree.scenario_branches()),
        criteria=criteria_table(data), attendance=attendance_table(data),
        actions=(actions := action_table(data, file_ref_numbers(tree))),
        nodes=nodes, picture=_report_picture(build_risk_picture(tree)),
        functions=tuple(added_functions(tree)), rules=warnings_by_rule(nodes),
        overdue=overdue_actions(actions, when.date()),
        signature=signature or Signature(f"{tree.study.revision_label}"),
        rounds=round_summaries(data, file_ref_numbers(tree)),
        word_scale=word_scale_table(data),
    )


def _report_picture(picture: RiskPicture) -> RiskPicture:
    """The risk picture with its gap chart cut to the `GAP_BARS_SHOWN` largest gaps, drawn on
    the whole study's axis."""
    if len(picture.ranked) <= GAP_BARS_SHOWN:
        return picture
    shown = [GapBarInput(f"{r.node_label}: {r.label}", r.gap_orders, r.spot)
             for r in picture.ranked[:GAP_BARS_SHOWN]]
    return replace(picture, gap_bars=build_gap_bars(
        shown, axis_gaps=[r.gap_orders for r in picture.ranked]))


def warnings_by_rule(nodes: tuple[ReportNode, ...]) -> tuple[RuleCount, ...]:
    """The IPL-check warnings counted by rule, with the scenarios raising them."""
    scenarios: dict[str, list[str]] = defaultdict(list)
    sources: dict[str, str] = {}
    for node in nodes:
        for entry in node.scenarios:
            for warning in entry.warnings:
                scenarios[warning.rule].append(entry.ref)
                sources[warning.rule] = warning_source(warning)
    return tuple(RuleCount(rule, len(refs), ", ".join(dict.fromkeys(refs)), sources[rule])
                 for rule, refs in scenarios.items())


def overdue_actions(actions: Table, today: date) -> frozenset[str]:
    """The numbers (A1, A2, ...) of open actions whose due date has passed."""
    return frozenset(str(row[0]) for row in actions.rows
                     if isinstance(row[3], date) and row[3] < today
                     and row[4] not in ("done", "rejected"))


def _report_scenario(ref: str, deviation: str, item: ScenarioBranch) -> ReportScenario:
    result = item.outcome.result
    steps = tuple(_report_step(s) for s in item.steps)
    ladder = build_ladder(result) if result is not None else None
    return ReportScenario(
        ref=ref, deviation=deviation, item=item, steps=steps, ladder=ladder,
        demand_mode=DEMAND_LABELS[result.sil_target.demand_mode] if result else "",
        warnings=tuple(scenario_warnings(item)), band=_band(ladder, item),
    )


def _band(ladder: LadderView | None, item: ScenarioBranch) -> LadderBand | None:
    spread = item.spread
    if ladder is None or spread is None or spread.governing.distribution.sigma == 0:
        return None
    found = spread.governing.distribution
    return ladder_band(ladder, found.p05, found.p95)


def _typed_value(step: Step) -> str:
    if step.value is None:
        return "not given yet"
    return step.value_text or format_number(step.value)


def _report_step(step: Step) -> ReportStep:
    typical = typical_words(step.typical_key)
    reason = "" if step.credited else (
        "the team did not credit it; see its basis" if step.basis.strip()
        else "the team did not credit it; no reason recorded")
    return ReportStep(step.kind.label, step.description, step.value,
                      _typed_value(step), step.credited, step.basis,
                      typical, reason)


def report_html(report: Report, *, env: Environment) -> str:
    """The report as an HTML document (every value escaped by the template environment)."""
    return env.get_template(REPORT_TEMPLATE).render(report=report, picture=report.picture)
