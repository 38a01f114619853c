"""The printable study report: display-ready data, its HTML, and the PDF WeasyPrint makes of it."""

from dataclasses import dataclass
from datetime import datetime

from jinja2 import Environment
from weasyprint import HTML, URLFetcher

from app.db.models import Node, Study
from app.services.exchange.export_tables import (
    DEMAND_LABELS,
    StudyData,
    Table,
    action_table,
    attendance_table,
    criteria_table,
    deviation_label,
    node_label,
    scenario_refs,
)
from app.services.risk.picture import RiskPicture, build_risk_picture
from app.services.study.listing import NodeTotals, totals_of
from app.services.study.tree import ScenarioBranch, StudyTree
from app.services.worksheet.ladder import LadderView, build_ladder

REPORT_TEMPLATE = "exchange/report/study.html"


@dataclass(frozen=True)
class ReportStep:
    """One step as the report lists it."""

    kind: str
    description: str
    value: float
    credited: bool
    basis: str


@dataclass(frozen=True)
class ReportScenario:
    """One scenario with its steps, outcome and ladder (None when it cannot be computed)."""

    ref: str
    deviation: str
    item: ScenarioBranch
    steps: tuple[ReportStep, ...]
    ladder: LadderView | None
    demand_mode: str


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


def build_report(tree: StudyTree, data: StudyData, *, when: datetime) -> Report:
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
        actions=action_table(data),
        nodes=nodes, picture=build_risk_picture(tree),
    )


def _report_scenario(ref: str, deviation: str, item: ScenarioBranch) -> ReportScenario:
    result = item.outcome.result
    steps = tuple(
        ReportStep(s.kind.label, s.description, s.value, s.credited,
                   s.basis)
        for s in item.steps
    )
    return ReportScenario(
        ref=ref, deviation=deviation, item=item, steps=steps,
        ladder=build_ladder(result) if result is not None else None,
        demand_mode=DEMAND_LABELS[result.sil_target.demand_mode] if result else "",
    )


def report_html(report: Report, *, env: Environment) -> str:
    """The report as an HTML document (every value escaped by the template environment)."""
    return env.get_template(REPORT_TEMPLATE).render(report=report, picture=report.picture)


def html_to_pdf(html: str) -> bytes:
    """Lay the HTML out as PDF; only data: URLs may be fetched, so nothing leaves the machine."""
    fetcher = URLFetcher(allowed_protocols={"data"})
    # WeasyPrint is untyped (a boundary): write_pdf() gives bytes when no target is passed.
    pdf: bytes | None = HTML(string=html, base_url=".", url_fetcher=fetcher).write_pdf()
    assert pdf is not None
    return pdf


def report_pdf(tree: StudyTree, data: StudyData, *, env: Environment, when: datetime) -> bytes:
    """The study report as PDF bytes."""
    return html_to_pdf(report_html(build_report(tree, data, when=when), env=env))
