"""The risk picture page read from the stored results: nothing is recomputed.

Every count, sum and ranking reads the scalar columns of `scenario_result` (one SELECT of the
study's rows in worksheet order); only the lines a page shows are filled in from their stored
`figures` JSON and labels, and the IPL-check warnings of the shown scenarios from their steps.
Lists that can run to thousands of lines show PAGE_SIZE at a time with links to the rest.
`build_risk_picture` (picture.py) is the from-scratch computation this page must equal: a test
compares the two on the demo and on a generated study.
"""

from collections import Counter, defaultdict
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Generic, NamedTuple, TypeVar
from urllib.parse import urlencode

from sqlalchemy import case, select
from sqlmodel import Session

from app.db.models import Deviation, Node, Scenario, ScenarioResultRow, SeverityCategory, Study
from app.db.queries import fetch_plain_rows, fetch_rows_of_study, step_figures_of_scenario_ids
from app.likelihood.completeness import left_out_words
from app.likelihood.types import DemandMode
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
from app.services.risk.ipl_checks import ScenarioWarnings
from app.services.risk.picture import (
    BAND_ORDER,
    DEMAND_WORDS,
    CategorySum,
    NodeSum,
    RankedScenario,
    SilBandCount,
    SilNeed,
    UncertainVerdict,
    UnknownCellError,
    UnresolvedScenario,
)
from app.services.study.result_figures import StoredResult
from app.services.study.results import warnings_of
from app.services.study.stored_results import NO_SCENARIOS, stored_node_totals
from app.services.study.tree import WorksheetSpot, get_study

# Any in this module: plain rows from SQLAlchemy carry no column types (the ORM boundary).

PAGE_SIZE = 50
"""Lines of each long list shown at a time (a study of a few hundred scenarios shows its lists
whole on one or two pages; one of 10,000 does not send 10,000 lines)."""

LISTS = ("ranked", "cell", "incomplete", "unresolved", "uncertain", "needs", "warnings")
"""The paged lists; `<name>_from` in the query string is where each one starts."""

T = TypeVar("T")


@dataclass(frozen=True)
class Paged(Generic[T]):
    """One page of a long list: its lines, where they start and how many there are in all."""

    items: tuple[T, ...]
    start: int
    total: int
    name: str

    def __iter__(self) -> Iterator[T]:
        return iter(self.items)

    def __bool__(self) -> bool:
        return self.total > 0

    @property
    def end(self) -> int:
        """One past the last line shown."""
        return self.start + len(self.items)

    @property
    def more(self) -> int:
        """Lines after this page."""
        return self.total - self.end

    @property
    def previous_start(self) -> int:
        """Where the page before this one starts."""
        return max(0, self.start - PAGE_SIZE)

    @property
    def next_count(self) -> int:
        """Lines the next page shows."""
        return min(self.more, PAGE_SIZE)


def page_start(start: int, total: int) -> int:
    """A requested start kept inside the list, on a page boundary (past the end: the last page)."""
    if total <= 0:
        return 0
    last = (total - 1) // PAGE_SIZE * PAGE_SIZE
    return min(max(0, start) // PAGE_SIZE * PAGE_SIZE, last)


class PictureRow(NamedTuple):
    """One scenario's stored figures as drawn (as credited, or with flagged credits withdrawn);
    a plain tuple straight from the SELECT, as the page reads 10,000 of them."""

    scenario_id: int
    computed: bool
    incomplete: bool
    flagged: bool
    category_id: int
    mitigated: float
    gap_orders: float
    short: bool
    sil_band: str
    demand_mode: str
    warning_count: int
    uncertain: bool
    p_meets: float | None

    @property
    def cell(self) -> str:
        """The matrix cell the scenario is counted in."""
        return cell_key(self.category_id, decade_of(self.mitigated))


def _drawn_columns(withdrawn: bool) -> list[Any]:
    """The columns of PictureRow; drawn withdrawn, a flagged scenario's come from its
    withdrawn figures (the others are drawn as credited either way)."""
    stored: Any = ScenarioResultRow

    def drawn(credited: Any, withdrawn_column: Any) -> Any:
        return case((stored.flagged, withdrawn_column), else_=credited) if withdrawn \
            else credited

    return [stored.scenario_id, stored.computed, stored.incomplete, stored.flagged,
            drawn(stored.category_id, stored.withdrawn_category_id),
            drawn(stored.mitigated_frequency, stored.withdrawn_mitigated_frequency),
            drawn(stored.gap_orders, stored.withdrawn_gap_orders),
            stored.short_withdrawn if withdrawn else stored.short,
            drawn(stored.sil_band, stored.withdrawn_sil_band),
            drawn(stored.demand_mode, stored.withdrawn_demand_mode),
            stored.warning_count, stored.uncertain, stored.p_meets]


def stored_picture_rows(session: Session, study_id: int, *, withdrawn: bool
                        ) -> list[PictureRow]:
    """Every scenario of the study as the picture draws it, in worksheet order (one SELECT)."""
    stored: Any = ScenarioResultRow
    scenario: Any = Scenario
    deviation: Any = Deviation
    node: Any = Node
    statement = (
        select(*_drawn_columns(withdrawn))
        .join(scenario, scenario.id == stored.scenario_id)
        .join(deviation, deviation.id == scenario.deviation_id)
        .join(node, node.id == deviation.node_id)
        .where(stored.study_id == study_id)
        .order_by(node.position, node.id, deviation.position, deviation.id,
                  scenario.position, scenario.id))
    make = PictureRow._make
    return [make(row) for row in session.connection().execute(statement)]


def severity_order(categories: Sequence[SeverityCategory]) -> list[SeverityCategory]:
    """Most severe first: lowest tolerable frequency at the top (as picture.py orders them)."""
    return sorted(categories, key=lambda c: (c.tolerable_frequency, c.position, c.id or 0))


def _matrix(categories: Sequence[SeverityCategory], ranked: Sequence[PictureRow]) -> RiskMatrix:
    counts: dict[int, Counter[int]] = defaultdict(Counter)
    for row in ranked:
        counts[row.category_id][decade_of(row.mitigated)] += 1
    return build_matrix([
        MatrixRowInput(category_id=c.id or 0, name=c.name, receptor=str(c.receptor),
                       tolerable=c.tolerable_frequency, counts=dict(counts[c.id or 0]))
        for c in categories])


def _category_sums(categories: Sequence[SeverityCategory], ranked: Sequence[PictureRow]
                   ) -> tuple[CategorySum, ...]:
    governed: dict[int, list[PictureRow]] = defaultdict(list)
    for row in ranked:  # ranked order: the sums add up in the order picture.py adds them
        governed[row.category_id].append(row)
    return tuple(CategorySum(
        name=c.name, receptor=str(c.receptor), tolerable=c.tolerable_frequency,
        scenario_count=len(governed[c.id or 0]),
        short_count=sum(r.short for r in governed[c.id or 0]),
        summed_frequency=sum(r.mitigated for r in governed[c.id or 0]))
        for c in categories)


def _sil_counts(ranked: Sequence[PictureRow]) -> tuple[SilBandCount, ...]:
    tally = Counter((r.sil_band, DEMAND_WORDS[DemandMode(r.demand_mode)])
                    for r in ranked if r.short)
    return tuple(SilBandCount(band, tally[(band, "low demand")], tally[(band, "high demand")])
                 for band in BAND_ORDER)


@dataclass(frozen=True)
class Shown:
    """What the shown lines need besides their scalar columns: labels, figures and nodes."""

    study_id: int
    labels: Mapping[int, Any]
    nodes: Mapping[int, Node]
    categories: Mapping[int, SeverityCategory]
    withdrawn: bool
    read: dict[int, StoredResult] = field(default_factory=dict)

    def spot(self, scenario_id: int) -> WorksheetSpot:
        """Where the scenario sits on the worksheet."""
        return WorksheetSpot(self.study_id, self.labels[scenario_id].node_id, scenario_id)

    def node_label(self, scenario_id: int) -> str:
        """'1 Feed drum'."""
        node = self.nodes[self.labels[scenario_id].node_id]
        return f"{node.number} {node.name}"

    def label(self, scenario_id: int) -> str:
        """'cause → consequence'."""
        found = self.labels[scenario_id]
        return f"{found.cause} → {found.consequence}"

    def figures(self, scenario_id: int) -> Any:
        """The scenario's drawn figures read from its stored JSON (once per scenario)."""
        if scenario_id not in self.read:
            self.read[scenario_id] = StoredResult.of_row(self.labels[scenario_id])
        return self.read[scenario_id].figures(withdrawn=self.withdrawn)


def _labels(session: Session, scenario_ids: set[int]) -> dict[int, Any]:
    stored: Any = ScenarioResultRow
    scenario: Any = Scenario
    deviation: Any = Deviation
    found: dict[int, Any] = {}
    ordered = sorted(scenario_ids)
    for i in range(0, len(ordered), 500):
        found.update((row.scenario_id, row) for row in session.connection().execute(
            select(stored.scenario_id, stored.node_id, stored.computed, stored.figures,
                   stored.error, stored.spread_median, stored.spread_p05, stored.spread_p95,
                   scenario.cause, scenario.consequence, deviation.guideword,
                   deviation.parameter)
            .join(scenario, scenario.id == stored.scenario_id)
            .join(deviation, deviation.id == scenario.deviation_id)
            .where(stored.scenario_id.in_(ordered[i:i + 500]))))
    return found


def _ranked(shown: Shown, row: PictureRow) -> RankedScenario:
    figures = shown.figures(row.scenario_id)
    result, category = figures.result, shown.categories[figures.category_id]
    found = shown.labels[row.scenario_id]
    return RankedScenario(
        scenario_id=row.scenario_id, label=shown.label(row.scenario_id),
        node_label=shown.node_label(row.scenario_id),
        deviation_label=f"{found.guideword} {found.parameter}",
        category_id=figures.category_id, category_name=category.name,
        decade=decade_of(result.mitigated_frequency), mitigated=result.mitigated_frequency,
        tolerable=result.tolerable_frequency, ratio=result.ratio, gap_orders=result.gap_orders,
        meets=result.meets_target, sil_label=result.sil_target.label,
        spot=shown.spot(row.scenario_id),
        cell=cell_key(figures.category_id, decade_of(result.mitigated_frequency)),
        flagged=row.flagged,
        demand_rate=result.demand.demand_rate_per_year if result.demand else 0.0,
        demand_formula=result.demand.formula if result.demand else "",
        receptor=figures.governing.value, p_meets=row.p_meets)


def _sil_need(shown: Shown, row: PictureRow) -> SilNeed:
    target = shown.figures(row.scenario_id).result.sil_target
    return SilNeed(scenario=_ranked(shown, row), required_rrf=target.required_rrf,
                   sil_label=target.label, demand_mode=DEMAND_WORDS[target.demand_mode],
                   required_pfd=target.required_pfd, required_pfh=target.required_pfh)


def _uncertain(shown: Shown, row: PictureRow) -> UncertainVerdict:
    found = shown.labels[row.scenario_id]
    assert row.p_meets is not None  # listed only when uncertain
    return UncertainVerdict(_ranked(shown, row), row.p_meets, found.spread_median,
                            found.spread_p05, found.spread_p95)


def _unresolved(shown: Shown, row: PictureRow) -> UnresolvedScenario:
    return UnresolvedScenario(shown.label(row.scenario_id), shown.node_label(row.scenario_id),
                              shown.spot(row.scenario_id),
                              str(shown.labels[row.scenario_id].error))


def _warnings(session: Session, shown: Shown, rows: Sequence[PictureRow]
              ) -> list[ScenarioWarnings]:
    steps: dict[int, list[Any]] = defaultdict(list)
    if rows:
        statement = step_figures_of_scenario_ids([r.scenario_id for r in rows])
        for step in fetch_plain_rows(session, statement):
            steps[step.scenario_id].append(step)
    return [ScenarioWarnings(
        scenario_id=r.scenario_id, node_id=shown.labels[r.scenario_id].node_id,
        node_label=shown.node_label(r.scenario_id),
        scenario_label=shown.label(r.scenario_id), spot=shown.spot(r.scenario_id),
        warnings=tuple(warnings_of(steps[r.scenario_id]))) for r in rows]


def _page(rows: Sequence[PictureRow], start: int) -> tuple[list[PictureRow], int]:
    first = page_start(start, len(rows))
    return list(rows[first:first + PAGE_SIZE]), first


@dataclass(frozen=True)
class PictureView:
    """Everything the risk picture page shows, its long lists one page at a time."""

    study_id: int
    withdrawn: bool
    most_likely_first: bool
    matrix: RiskMatrix
    gap_bars: GapBars
    category_sums: tuple[CategorySum, ...]
    node_sums: tuple[NodeSum, ...]
    sil_counts: tuple[SilBandCount, ...]
    ranked: Paged[RankedScenario]
    incomplete: Paged[UnresolvedScenario]
    unresolved: Paged[UnresolvedScenario]
    uncertain: Paged[UncertainVerdict]
    sil_needs: Paged[SilNeed]
    warnings: Paged[ScenarioWarnings]
    query: Mapping[str, str] = field(default_factory=dict)
    """The page's own query (drawing, ranking, cell, where each list starts)."""

    @property
    def left_out(self) -> str:
        """What the ranking, the sums and the SIL counts say they leave out ('' if nothing)."""
        return left_out_words(self.incomplete.total)

    def link(self, name: str, start: int) -> str:
        """The query string of this page with one list starting elsewhere."""
        query = {**self.query, f"{name}_from": str(start)}
        return "?" + urlencode({k: v for k, v in query.items() if v not in ("", "0")})


@dataclass(frozen=True)
class StoredCellSelection:
    """The scenarios of one matrix cell, one page at a time."""

    key: str
    title: str
    scenarios: Paged[RankedScenario]


@dataclass(frozen=True)
class StoredRiskPage:
    """The risk picture page: the study, its picture and an optional selected cell."""

    study: Study
    picture: PictureView
    selection: StoredCellSelection | None
    cell_error: str


@dataclass(frozen=True)
class Lists:
    """The study's rows sorted into the picture's lists (whole, before paging)."""

    ranked: list[PictureRow]
    incomplete: list[PictureRow]
    unresolved: list[PictureRow]
    uncertain: list[PictureRow]
    needs: list[PictureRow]
    warned: list[PictureRow]

    @classmethod
    def of(cls, rows: Sequence[PictureRow], *, most_likely_first: bool) -> "Lists":
        """Sorted as picture.py sorts them (stable sorts over worksheet order)."""
        computed = [r for r in rows if r.computed]
        ranked = sorted(computed, key=lambda r: -r.gap_orders)
        uncertain = [r for r in computed if r.uncertain and r.p_meets is not None]
        uncertain.sort(key=lambda r: -(r.p_meets or 0.0) if most_likely_first
                       else (r.p_meets or 0.0))
        return cls(ranked,
                   [r for r in rows if not r.computed and r.incomplete],
                   [r for r in rows if not r.computed and not r.incomplete],
                   uncertain, [r for r in ranked if r.short],
                   [r for r in rows if r.warning_count])


def _cell(matrix: RiskMatrix, key: str | None) -> tuple[Any, str]:
    if not key:
        return None, ""
    cell = next((c for c in matrix.cells if c.key == key), None)
    if cell is None:
        return None, str(UnknownCellError(
            f"Matrix cell: '{key}' is not a cell of this study's matrix "
            f"(cells read like 'cat-3:decade--4')."))
    return cell, ""


def _query(cell: str | None, withdrawn: bool, most_likely_first: bool,
           starts: Mapping[str, int]) -> dict[str, str]:
    query = {"credits": "withdrawn" if withdrawn else "",
             "uncertain": "likely" if most_likely_first else "", "cell": cell or ""}
    query.update({f"{name}_from": str(starts.get(name, 0)) for name in LISTS})
    return query


def _paged(name: str, rows: Sequence[PictureRow], starts: Mapping[str, int]
           ) -> tuple[list[PictureRow], int]:
    return _page(rows, starts.get(name, 0))


def read_stored_risk_page(*, session: Session, study_id: int, cell: str | None = None,
                          withdrawn: bool = False, most_likely_first: bool = False,
                          starts: Mapping[str, int] | None = None) -> StoredRiskPage:
    """The risk picture from the stored rows, each long list from its requested start."""
    starts = starts or {}
    study = get_study(session, study_id)
    by_node, _ = stored_node_totals(session, study_id)  # rebuilds stale stored rows first
    categories = severity_order(fetch_rows_of_study(session, SeverityCategory, study_id))
    nodes = fetch_rows_of_study(session, Node, study_id)
    lists = Lists.of(stored_picture_rows(session, study_id, withdrawn=withdrawn),
                     most_likely_first=most_likely_first)
    matrix = _matrix(categories, lists.ranked)
    chosen, error = _cell(matrix, cell)
    in_cell = [r for r in lists.ranked if r.cell == chosen.key] if chosen else []
    pages = {name: _paged(name, rows, starts) for name, rows in (
        ("ranked", lists.ranked), ("cell", in_cell), ("incomplete", lists.incomplete),
        ("unresolved", lists.unresolved), ("uncertain", lists.uncertain),
        ("needs", lists.needs), ("warnings", lists.warned))}
    shown = Shown(study_id, _labels(session, {r.scenario_id for rows, _ in pages.values()
                                               for r in rows}),
                  {n.id or 0: n for n in nodes}, {c.id or 0: c for c in categories}, withdrawn)

    def paged(name: str, total: int, build: Callable[[PictureRow], T]) -> Paged[T]:
        rows, first = pages[name]
        return Paged(tuple(build(r) for r in rows), first, total, name)

    ranked = paged("ranked", len(lists.ranked), lambda r: _ranked(shown, r))
    picture = PictureView(
        study_id=study_id, withdrawn=withdrawn, most_likely_first=most_likely_first,
        matrix=matrix,
        gap_bars=build_gap_bars([GapBarInput(f"{r.node_label}: {r.label}", r.gap_orders, r.spot)
                                 for r in ranked], [r.gap_orders for r in lists.ranked]),
        category_sums=_category_sums(categories, lists.ranked),
        node_sums=tuple(NodeSum(f"{n.number} {n.name}", WorksheetSpot(study_id, n.id or 0),
                                by_node.get(n.id or 0, NO_SCENARIOS)) for n in nodes),
        sil_counts=_sil_counts(lists.ranked), ranked=ranked,
        incomplete=paged("incomplete", len(lists.incomplete), lambda r: _unresolved(shown, r)),
        unresolved=paged("unresolved", len(lists.unresolved), lambda r: _unresolved(shown, r)),
        uncertain=paged("uncertain", len(lists.uncertain), lambda r: _uncertain(shown, r)),
        sil_needs=paged("needs", len(lists.needs), lambda r: _sil_need(shown, r)),
        warnings=Paged(tuple(_warnings(session, shown, pages["warnings"][0])),
                       pages["warnings"][1], len(lists.warned), "warnings"),
        query=_query(cell, withdrawn, most_likely_first, starts))
    selection = (StoredCellSelection(chosen.key, chosen.title,
                                     paged("cell", len(in_cell), lambda r: _ranked(shown, r)))
                 if chosen else None)
    return StoredRiskPage(study, picture, selection, error)
