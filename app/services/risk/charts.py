"""Geometry of the risk picture's two drawings: the severity x frequency matrix and the gap bars.

Everything is laid out here in user units so the templates only place shapes; the SVG carries
its colours as attributes, so the same markup prints and goes into the PDF unchanged.
"""

import math
from collections.abc import Sequence
from dataclasses import dataclass

from app.likelihood.numbers import format_number
from app.likelihood.validation import at_least, at_most
from app.services.study.tree import WorksheetSpot

TOP_DECADE = 0
"""Column for 1 per year and more."""
BOTTOM_DECADE = -7
"""Column for below 1e-6 per year."""
DECADES = tuple(range(BOTTOM_DECADE, TOP_DECADE + 1))
"""Matrix columns, left to right from rare to frequent."""


@dataclass(frozen=True)
class Zone:
    """How a matrix cell lies against its row's tolerable frequency: colour, pattern and letter."""

    key: str
    letter: str
    title: str
    fill: str
    pattern: str  # "" for a plain fill


# Blue against orange stays apart under red-green colour blindness; lightness and letter back it.
ZONES: dict[str, Zone] = {
    "meets": Zone("meets", "M", "Meets: the whole decade is at or below the tolerable frequency",
                  "#cfe2f3", ""),
    "edge": Zone("edge", "E", "Edge: the tolerable frequency lies in this decade",
                 "#f1ecc9", "dots"),
    "short": Zone("short", "S", "Short: up to 100 times the tolerable frequency",
                  "#f5c38f", "hatch"),
    "far": Zone("far", "F", "Far short: 100 times the tolerable frequency or more",
                "#d9773a", "cross"),
}


def decade_of(frequency: float) -> int:
    """The matrix column of a frequency per year: floor(log10), clamped to the outer columns."""
    exponent = math.floor(math.log10(frequency) + 1e-9)  # 1e-4 itself belongs to the 1e-4 column
    return max(BOTTOM_DECADE, min(TOP_DECADE, exponent))


def decade_label(decade: int) -> str:
    """Column heading: '≥ 1', '1e-3 to 1e-2', '< 1e-6'."""
    if decade == TOP_DECADE:
        return "≥ 1"
    if decade == BOTTOM_DECADE:
        return f"< 1e{BOTTOM_DECADE + 1}"
    upper = "1" if decade == -1 else f"1e{decade + 1}"
    return f"1e{decade} to {upper}"


def zone_of(decade: int, tolerable: float) -> Zone:
    """The zone of a whole decade against a tolerable frequency."""
    lower = 0.0 if decade == BOTTOM_DECADE else 10.0**decade
    upper = math.inf if decade == TOP_DECADE else 10.0 ** (decade + 1)
    if at_most(upper, tolerable):
        return ZONES["meets"]
    if lower > 0 and at_least(lower, 100 * tolerable):
        return ZONES["far"]
    if lower > 0 and at_least(lower, tolerable):
        return ZONES["short"]
    return ZONES["edge"]


@dataclass(frozen=True)
class MatrixRowInput:
    """One severity category as a matrix row, with the scenarios it governs by column."""

    category_id: int
    name: str
    receptor: str
    tolerable: float
    counts: dict[int, int]


@dataclass(frozen=True)
class MatrixCell:
    """One cell: where it is, how many scenarios it holds and how it lies against the target."""

    key: str
    x: float
    y: float
    count: int
    zone: Zone
    title: str


@dataclass(frozen=True)
class MatrixLabel:
    """A row or column heading and where it goes."""

    text: str
    subtext: str
    x: float
    y: float


@dataclass(frozen=True)
class LegendEntry:
    """One zone in the legend, with the place of its swatch."""

    zone: Zone
    x: float
    y: float


@dataclass(frozen=True)
class RiskMatrix:
    """The matrix drawing: size, headings, cells and legend."""

    width: float
    height: float
    cell_width: float
    cell_height: float
    grid_left: float
    grid_top: float
    grid_width: float
    grid_height: float
    rows: tuple[MatrixLabel, ...]
    columns: tuple[MatrixLabel, ...]
    cells: tuple[MatrixCell, ...]
    legend: tuple[LegendEntry, ...]


LABEL_WIDTH, CELL_W, CELL_H, HEAD_H, LEGEND_ROW_H = 250.0, 92.0, 54.0, 46.0, 24.0


def cell_key(category_id: int, decade: int) -> str:
    """The key a cell link carries: 'cat-3:decade--4'."""
    return f"cat-{category_id}:decade-{decade}"


def _cell(row: MatrixRowInput, row_index: int, column_index: int, decade: int) -> MatrixCell:
    count = row.counts.get(decade, 0)
    plural = "scenario" if count == 1 else "scenarios"
    return MatrixCell(
        key=cell_key(row.category_id, decade),
        x=LABEL_WIDTH + column_index * CELL_W,
        y=HEAD_H + row_index * CELL_H,
        count=count,
        zone=zone_of(decade, row.tolerable),
        title=f"{row.name}, {decade_label(decade)} per year: {count} {plural}",
    )


def build_matrix(rows: Sequence[MatrixRowInput]) -> RiskMatrix:
    """Lay out the matrix; rows come most severe (lowest tolerable frequency) first."""
    grid_width, grid_height = CELL_W * len(DECADES), CELL_H * len(rows)
    row_labels = tuple(
        MatrixLabel(r.name, f"{r.receptor} · tolerable {format_number(r.tolerable)} /yr",
                    LABEL_WIDTH - 10, HEAD_H + i * CELL_H + CELL_H / 2)
        for i, r in enumerate(rows)
    )
    column_labels = tuple(
        MatrixLabel(decade_label(d), "per year", LABEL_WIDTH + i * CELL_W + CELL_W / 2, HEAD_H - 24)
        for i, d in enumerate(DECADES)
    )
    cells = tuple(
        _cell(row, ri, ci, decade)
        for ri, row in enumerate(rows)
        for ci, decade in enumerate(DECADES)
    )
    legend_top = HEAD_H + grid_height + 34
    legend = tuple(
        LegendEntry(zone, LABEL_WIDTH, legend_top + i * LEGEND_ROW_H)
        for i, zone in enumerate(ZONES.values())
    )
    return RiskMatrix(
        width=LABEL_WIDTH + grid_width + 10,
        height=legend_top + len(ZONES) * LEGEND_ROW_H + 6,
        cell_width=CELL_W, cell_height=CELL_H,
        grid_left=LABEL_WIDTH, grid_top=HEAD_H, grid_width=grid_width, grid_height=grid_height,
        rows=row_labels, columns=column_labels, cells=cells, legend=legend,
    )


@dataclass(frozen=True)
class GapBarInput:
    """One scenario's gap in orders of magnitude (positive: short of target)."""

    label: str
    gap_orders: float
    spot: WorksheetSpot


@dataclass(frozen=True)
class GapBar:
    """One bar: its row, where it starts and ends, and its texts."""

    label: str
    value_text: str
    status_text: str
    meets: bool
    spot: WorksheetSpot
    y: float
    x: float
    width: float
    text_x: float


@dataclass(frozen=True)
class GapTick:
    """An axis tick at a whole order of magnitude."""

    x: float
    text: str


@dataclass(frozen=True)
class GapBars:
    """The gap bar drawing: size, zero line, ticks and bars."""

    width: float
    height: float
    zero_x: float
    label_x: float
    axis_top: float
    axis_bottom: float
    bar_height: float
    ticks: tuple[GapTick, ...]
    bars: tuple[GapBar, ...]


BAR_LABEL_W, BAR_AREA_W, BAR_ROW_H, BAR_TOP, BAR_TEXT_W = 330.0, 480.0, 22.0, 30.0, 110.0


def _axis_range(gaps: Sequence[float]) -> tuple[int, int]:
    low = min([-2.0, *gaps])
    high = max([2.0, *gaps])
    return math.floor(low), math.ceil(high)


def _short_label(text: str, limit: int = 48) -> str:
    return text if len(text) <= limit else text[: limit - 1].rstrip() + "…"


def build_gap_bars(items: Sequence[GapBarInput],
                   axis_gaps: Sequence[float] | None = None) -> GapBars:
    """Lay out one bar per scenario, in the given order, on a shared orders-of-magnitude axis
    (spanning `axis_gaps` when given: a page of bars on the whole study's axis)."""
    low, high = _axis_range([i.gap_orders for i in items] if axis_gaps is None else axis_gaps)
    scale = BAR_AREA_W / (high - low)
    zero_x = BAR_LABEL_W + (0 - low) * scale
    bars = []
    for index, item in enumerate(items):
        end_x = zero_x + item.gap_orders * scale
        meets = not item.gap_orders > 0
        bars.append(GapBar(
            label=_short_label(item.label),
            value_text=f"{item.gap_orders:+.1f}",
            status_text="meets" if meets else "short",
            meets=meets,
            spot=item.spot,
            y=BAR_TOP + index * BAR_ROW_H,
            x=min(zero_x, end_x),
            width=abs(end_x - zero_x),
            text_x=max(zero_x, end_x) + 6,
        ))
    ticks = tuple(
        GapTick(zero_x + order * scale, f"{order:+d}" if order else "0")
        for order in range(low, high + 1)
    )
    bottom = BAR_TOP + len(items) * BAR_ROW_H
    return GapBars(
        width=BAR_LABEL_W + BAR_AREA_W + BAR_TEXT_W, height=bottom + 8,
        zero_x=zero_x, label_x=BAR_LABEL_W - 8, axis_top=BAR_TOP - 6, axis_bottom=bottom,
        bar_height=BAR_ROW_H - 6,
        ticks=ticks, bars=tuple(bars),
    )
