"""The study risk picture computed from the study tree: ranking, sums, matrix, gap bars, SIL needs.

The PDF report draws it; the page reads the same figures from the stored rows
(stored_picture.py), tested equal to this computation.
"""

from collections import Counter
from dataclasses import dataclass

from app.db.models import SeverityCategory
from app.likelihood.completeness import left_out_words
from app.likelihood.types import DemandMode, SilStatus
from app.services.risk.charts import (
    GapBarInput,
    GapBars,
    MatrixRowInput,
    RiskMatrix,
    build_gap_bars,
    build_matrix,
    cell_key,
    decade_of,
)
from app.services.risk.ipl_checks import ScenarioWarnings, study_warnings
from app.services.study.listing import NodeTotals, totals_of
from app.services.study.result_figures import SIL_BANDS
from app.services.study.results import Figures
from app.services.study.tree import (
    NodeBranch,
    ScenarioBranch,
    StudyTree,
    WorksheetSpot,
)


@dataclass(frozen=True)
class RankedScenario:
    """One computed scenario as the risk picture lists it."""

    scenario_id: int
    label: str
    node_label: str
    deviation_label: str
    category_id: int
    category_name: str
    decade: int
    mitigated: float
    tolerable: float
    ratio: float
    gap_orders: float
    meets: bool
    sil_label: str
    spot: WorksheetSpot
    cell: str
    flagged: bool = False
    """A check doubts one of its credits (marked ⚑ wherever it is listed)."""
    demand_rate: float = 0.0
    demand_formula: str = ""
    receptor: str = ""
    p_meets: float | None = None
    """P(mitigated frequency <= tolerable) from the steps' error factors, as credited."""


@dataclass(frozen=True)
class UncertainVerdict:
    """A scenario whose verdict could go either way: 5 % < P(meets target) < 95 %."""

    scenario: RankedScenario
    probability: float
    median: float
    p05: float
    p95: float


@dataclass(frozen=True)
class UnresolvedScenario:
    """A scenario that cannot be computed, and why."""

    label: str
    node_label: str
    spot: WorksheetSpot
    reason: str


@dataclass(frozen=True)
class CategorySum:
    """The scenarios one severity category governs, and their summed mitigated frequency."""

    name: str
    receptor: str
    tolerable: float
    scenario_count: int
    short_count: int
    summed_frequency: float


@dataclass(frozen=True)
class NodeSum:
    """A node's scenarios and their summed mitigated frequency."""

    label: str
    spot: WorksheetSpot
    totals: NodeTotals


@dataclass(frozen=True)
class SilNeed:
    """What an added function must achieve to close one scenario's gap."""

    scenario: RankedScenario
    required_rrf: float
    sil_label: str
    demand_mode: str
    required_pfd: float | None
    required_pfh: float | None


@dataclass(frozen=True)
class SilBandCount:
    """How many added functions fall in one band, in low and in high demand."""

    label: str
    low_demand: int
    high_demand: int


@dataclass(frozen=True)
class RiskPicture:
    """Display-ready data for the risk picture page and the report's drawings."""

    study_id: int
    ranked: tuple[RankedScenario, ...]
    unresolved: tuple[UnresolvedScenario, ...]
    category_sums: tuple[CategorySum, ...]
    node_sums: tuple[NodeSum, ...]
    matrix: RiskMatrix
    gap_bars: GapBars
    sil_needs: tuple[SilNeed, ...]
    sil_counts: tuple[SilBandCount, ...]
    warnings: tuple[ScenarioWarnings, ...]
    withdrawn: bool = False
    """Drawn with every credit an IPL check flags withdrawn (PFD 1), not as credited."""
    uncertain: tuple[UncertainVerdict, ...] = ()
    """Scenarios whose verdict is uncertain, least likely to meet the target first."""
    most_likely_first: bool = False
    """`uncertain` ranked the other way: most likely to meet the target first."""
    incomplete: tuple[UnresolvedScenario, ...] = ()
    """Scenarios without an initiating frequency or a severity yet: not ranked, summed,
    drawn or counted (services/study/completeness.py)."""

    @property
    def left_out(self) -> str:
        """What the ranking, the sums and the SIL counts say they leave out ('' if nothing)."""
        return left_out_words(len(self.incomplete))


BAND_ORDER = SIL_BANDS
DEMAND_WORDS = {DemandMode.LOW: "low demand", DemandMode.HIGH: "high demand"}


def _node_label(node_branch: NodeBranch) -> str:
    return f"{node_branch.node.number} {node_branch.node.name}"


def _ranked(study_id: int, node_branch: NodeBranch, deviation_label: str, item: ScenarioBranch,
            figures: Figures) -> RankedScenario:
    scenario, result = item.scenario, figures.result
    category = item.outcome.category_of(figures.governing.receptor)
    assert category is not None and category.id is not None  # a result needs a category
    return RankedScenario(
        scenario_id=scenario.id or 0,
        label=f"{scenario.cause} → {scenario.consequence}",
        node_label=_node_label(node_branch),
        deviation_label=deviation_label,
        category_id=category.id,
        category_name=category.name,
        decade=decade_of(result.mitigated_frequency),
        mitigated=result.mitigated_frequency,
        tolerable=result.tolerable_frequency,
        ratio=result.ratio,
        gap_orders=result.gap_orders,
        meets=result.meets_target,
        sil_label=result.sil_target.label,
        spot=WorksheetSpot(study_id, node_branch.node.id or 0, scenario.id or 0),
        cell=cell_key(category.id, decade_of(result.mitigated_frequency)),
        flagged=item.outcome.assessment is not None and item.outcome.assessment.withdrawn
        is not None,
        demand_rate=result.demand.demand_rate_per_year if result.demand else 0.0,
        demand_formula=result.demand.formula if result.demand else "",
        receptor=figures.governing.receptor.value,
        p_meets=(item.spread.governing.distribution.probability_meets_target
                 if item.spread else None),
    )


def _scenarios(tree: StudyTree, *, withdrawn: bool
               ) -> tuple[list[RankedScenario], list[UnresolvedScenario],
                          list[UnresolvedScenario]]:
    ranked: list[RankedScenario] = []
    unresolved: list[UnresolvedScenario] = []
    incomplete: list[UnresolvedScenario] = []
    study_id = tree.study.id or 0
    for node_branch in tree.nodes:
        for deviation_branch in node_branch.deviations:
            deviation = deviation_branch.deviation
            deviation_label = f"{deviation.guideword} {deviation.parameter}"
            for item in deviation_branch.scenarios:
                figures = item.outcome.figures(withdrawn=withdrawn)
                if figures is not None:
                    ranked.append(_ranked(study_id, node_branch, deviation_label, item, figures))
                    continue
                scenario = item.scenario
                (incomplete if item.outcome.incomplete else unresolved).append(
                    UnresolvedScenario(
                    f"{scenario.cause} → {scenario.consequence}", _node_label(node_branch),
                    WorksheetSpot(study_id, node_branch.node.id or 0, scenario.id or 0),
                    item.outcome.error,
                ))
    ranked.sort(key=lambda r: -r.gap_orders)  # stable: worksheet order among equal gaps
    return ranked, unresolved, incomplete


def _severity_order(categories: list[SeverityCategory]) -> list[SeverityCategory]:
    """Most severe first: lowest tolerable frequency at the top."""
    return sorted(categories, key=lambda c: (c.tolerable_frequency, c.position, c.id or 0))


def _category_sum(category: SeverityCategory, ranked: list[RankedScenario]) -> CategorySum:
    governed = [r for r in ranked if r.category_id == category.id]
    return CategorySum(
        name=category.name, receptor=str(category.receptor),
        tolerable=category.tolerable_frequency, scenario_count=len(governed),
        short_count=sum(not r.meets for r in governed),
        summed_frequency=sum(r.mitigated for r in governed),
    )


def _matrix(tree: StudyTree, ranked: list[RankedScenario]) -> RiskMatrix:
    rows = [
        MatrixRowInput(
            category_id=c.id or 0, name=c.name, receptor=str(c.receptor),
            tolerable=c.tolerable_frequency,
            counts=dict(Counter(r.decade for r in ranked if r.category_id == c.id)),
        )
        for c in _severity_order(tree.categories)
    ]
    return build_matrix(rows)


def _band_label(result_label: str, status: SilStatus, sil: int | None) -> str:
    if status is SilStatus.SIL:
        return f"SIL {sil}"
    if status is SilStatus.BELOW_SIL1:
        return "Below SIL 1"
    return "Beyond one function" if status is SilStatus.BEYOND_ONE_FUNCTION else result_label


def _sil_needs(tree: StudyTree, ranked: list[RankedScenario], *, withdrawn: bool
               ) -> list[tuple[SilNeed, str]]:
    figures = {s.scenario.id: s.outcome.figures(withdrawn=withdrawn)
               for s in tree.scenario_branches()}
    needs = []
    for item in ranked:
        found = figures[item.scenario_id]
        if item.meets or found is None:
            continue
        result = found.result
        target = result.sil_target
        needs.append((SilNeed(
            scenario=item, required_rrf=target.required_rrf, sil_label=target.label,
            demand_mode=DEMAND_WORDS[target.demand_mode],
            required_pfd=target.required_pfd, required_pfh=target.required_pfh,
        ), _band_label(target.label, target.status, target.sil)))
    return needs


def _sil_counts(needs: list[tuple[SilNeed, str]]) -> tuple[SilBandCount, ...]:
    tally = Counter((band, need.demand_mode) for need, band in needs)
    return tuple(
        SilBandCount(band, tally[(band, "low demand")], tally[(band, "high demand")])
        for band in BAND_ORDER
    )


def uncertain_verdicts(tree: StudyTree, ranked: list[RankedScenario], *,
                       most_likely_first: bool = False) -> tuple[UncertainVerdict, ...]:
    """The scenarios with 5 % < P(meets) < 95 %, ranked by that probability (as credited)."""
    listed = {r.scenario_id: r for r in ranked}
    found = []
    for item in tree.scenario_branches():
        line = item.spread.governing if item.spread else None
        if line is None or not line.uncertain or item.scenario.id not in listed:
            continue
        d = line.distribution
        found.append(UncertainVerdict(listed[item.scenario.id], d.probability_meets_target,
                                      d.median, d.p05, d.p95))
    found.sort(key=lambda u: -u.probability if most_likely_first else u.probability)
    return tuple(found)


def build_risk_picture(tree: StudyTree, *, withdrawn: bool = False,
                       most_likely_first: bool = False) -> RiskPicture:
    """Everything the risk picture shows, as credited or with flagged credits withdrawn."""
    ranked, unresolved, incomplete = _scenarios(tree, withdrawn=withdrawn)
    study_id = tree.study.id or 0
    needs = _sil_needs(tree, ranked, withdrawn=withdrawn)
    return RiskPicture(
        study_id=study_id,
        ranked=tuple(ranked),
        unresolved=tuple(unresolved),
        category_sums=tuple(_category_sum(c, ranked) for c in _severity_order(tree.categories)),
        node_sums=tuple(
            NodeSum(_node_label(n), WorksheetSpot(study_id, n.node.id or 0),
                    totals_of(n.scenario_branches()))
            for n in tree.nodes
        ),
        matrix=_matrix(tree, ranked),
        gap_bars=build_gap_bars(
            [GapBarInput(f"{r.node_label}: {r.label}", r.gap_orders, r.spot) for r in ranked]
        ),
        sil_needs=tuple(need for need, _ in needs),
        sil_counts=_sil_counts(needs),
        warnings=tuple(study_warnings(tree)),
        withdrawn=withdrawn,
        uncertain=uncertain_verdicts(tree, ranked, most_likely_first=most_likely_first),
        most_likely_first=most_likely_first,
        incomplete=tuple(incomplete),
    )


class UnknownCellError(ValueError):
    """A matrix cell key that names no cell of this study's matrix."""


@dataclass(frozen=True)
class CellSelection:
    """The scenarios of one matrix cell."""

    key: str
    title: str
    scenarios: tuple[RankedScenario, ...]


def select_cell(picture: RiskPicture, key: str) -> CellSelection:
    """The scenarios in the matrix cell with this key, or UnknownCellError."""
    cell = next((c for c in picture.matrix.cells if c.key == key), None)
    if cell is None:
        raise UnknownCellError(
            f"Matrix cell: '{key}' is not a cell of this study's matrix "
            f"(cells read like 'cat-3:decade--4')."
        )
    return CellSelection(key, cell.title, tuple(r for r in picture.ranked if r.cell == key))
