"""The frequency ladder: a scenario's running frequency on a log scale of decades, ready to draw.

Pure geometry: everything the SVG template needs is computed here, so the worksheet, the room
view and the PDF report draw the same picture and a test can check the positions as numbers.
"""

import itertools
import math
from dataclasses import dataclass

from app.likelihood.numbers import format_number
from app.likelihood.types import ScenarioResult, StepKind

TOP_EXPONENT = 0  # 1 per year
BOTTOM_EXPONENT = -8  # 1e-8 per year
DECADE_HEIGHT = 30.0
WIDTH = 460.0
LABEL_GAP = 13.0  # least vertical room between the two right-hand labels
PLOT_LEFT = 62.0
PLOT_RIGHT = 330.0
MARGIN_TOP = 22.0
MARGIN_BOTTOM = 14.0

@dataclass(frozen=True)
class LadderDecade:
    """One decade line of the scale: 10**exponent per year at height y."""

    exponent: int
    label: str
    y: float


@dataclass(frozen=True)
class LadderMark:
    """One step on the ladder: its tread from x_start to x_end at height y."""

    code: str
    label: str
    factor_text: str
    frequency: float
    frequency_text: str
    x_start: float
    x_end: float
    x_mid: float
    y: float


@dataclass(frozen=True)
class LadderDrop:
    """The vertical line where one step takes the frequency down to the next."""

    x: float
    y_from: float
    y_to: float


@dataclass(frozen=True)
class LadderView:
    """A display-ready ladder: decades, steps, the mitigated point, the target line and the gap."""

    width: float
    height: float
    plot_left: float
    plot_right: float
    decades: tuple[LadderDecade, ...]
    marks: tuple[LadderMark, ...]
    drops: tuple[LadderDrop, ...]
    mitigated: LadderMark
    target_y: float
    target_label: str
    mitigated_label_y: float
    target_label_y: float
    gap_x: float
    gap_label: str
    meets_target: bool
    description: str


def decade_range(values: list[float]) -> tuple[int, int]:
    """Top and bottom exponents: 1 to 1e-8 per year, widened to hold every value."""
    exponents = [math.log10(v) for v in values if v > 0 and math.isfinite(v)]
    top = max([TOP_EXPONENT, *(math.ceil(e) for e in exponents)])
    bottom = min([BOTTOM_EXPONENT, *(math.floor(e) for e in exponents)])
    return top, bottom


def y_of(frequency: float, top_exponent: int) -> float:
    """Height of a frequency on the scale: one DECADE_HEIGHT per factor of ten."""
    return MARGIN_TOP + (top_exponent - math.log10(frequency)) * DECADE_HEIGHT


def _decades(top: int, bottom: int) -> tuple[LadderDecade, ...]:
    return tuple(
        LadderDecade(e, "1" if e == 0 else f"1e{e}", y_of(10.0**e, top))
        for e in range(top, bottom - 1, -1)
    )


def _marks(result: ScenarioResult, top: int) -> tuple[LadderMark, ...]:
    count = len(result.ladder)
    width = (PLOT_RIGHT - PLOT_LEFT) / count
    marks = []
    for index, point in enumerate(result.ladder):
        x_start = PLOT_LEFT + index * width
        factor = (f"{format_number(point.factor)} /yr" if point.kind == StepKind.INITIATING_EVENT
                  else f"× {format_number(point.factor)}")  # noqa: RUF001
        name = point.label or point.kind.words
        marks.append(LadderMark(
            code=point.kind.short, label=name, factor_text=factor,
            frequency=point.frequency_after,
            frequency_text=format_number(point.frequency_after),
            x_start=x_start, x_end=x_start + width, x_mid=x_start + width / 2,
            y=y_of(point.frequency_after, top),
        ))
    return tuple(marks)


def _drops(marks: tuple[LadderMark, ...]) -> tuple[LadderDrop, ...]:
    return tuple(
        LadderDrop(after.x_start, before.y, after.y)
        for before, after in itertools.pairwise(marks)
    )


def _gap_label(result: ScenarioResult) -> str:
    if result.meets_target:
        return "meets target"
    return f"gap {result.gap_orders:+.1f} orders"


def _label_heights(mitigated_y: float, target_y: float) -> tuple[float, float]:
    """Heights for the mitigated and target labels, pushed apart when they would overlap."""
    shortfall = LABEL_GAP - abs(mitigated_y - target_y)
    if shortfall <= 0:
        return mitigated_y, target_y
    # The label that sits higher goes up, the other down, each by half of what is missing.
    push = shortfall / 2 if mitigated_y > target_y else -shortfall / 2
    return mitigated_y + push, target_y - push


def build_ladder(result: ScenarioResult) -> LadderView:
    """The ladder picture of a computed scenario."""
    values = [p.frequency_after for p in result.ladder] + [result.tolerable_frequency]
    top, bottom = decade_range(values)
    marks = _marks(result, top)
    mitigated = marks[-1]
    target_y = y_of(result.tolerable_frequency, top)
    mitigated_label_y, target_label_y = _label_heights(mitigated.y, target_y)
    description = (
        f"Frequency ladder: initiating {format_number(result.initiating_frequency)} per year, "
        f"mitigated {mitigated.frequency_text} per year, target "
        f"{format_number(result.tolerable_frequency)} per year, {_gap_label(result)}."
    )
    return LadderView(
        width=WIDTH,
        height=MARGIN_TOP + (top - bottom) * DECADE_HEIGHT + MARGIN_BOTTOM,
        plot_left=PLOT_LEFT,
        plot_right=PLOT_RIGHT,
        decades=_decades(top, bottom),
        marks=marks,
        drops=_drops(marks),
        mitigated=mitigated,
        target_y=target_y,
        target_label=f"target {format_number(result.tolerable_frequency)}",
        mitigated_label_y=mitigated_label_y,
        target_label_y=target_label_y,
        gap_x=PLOT_RIGHT + 14,
        gap_label=_gap_label(result),
        meets_target=result.meets_target,
        description=description,
    )


@dataclass(frozen=True)
class LadderBand:
    """The mitigated frequency's 5-95 % band beside the result point (issue 13).

    `clipped_*` says the percentile lies beyond the drawn decades (the bar stops at the edge).
    """

    x: float
    y_p95: float
    y_p05: float
    clipped_top: bool
    clipped_bottom: bool
    description: str


def ladder_band(ladder: LadderView, p05: float, p95: float) -> LadderBand:
    """Where the 5th and 95th percentiles sit on an already drawn ladder, kept inside it."""
    top = ladder.decades[0].exponent
    y_top, y_bottom = ladder.decades[0].y, ladder.decades[-1].y
    y_p95 = y_of(p95, top) if p95 > 0 and math.isfinite(p95) else y_top
    y_p05 = y_of(p05, top) if p05 > 0 else y_bottom
    return LadderBand(
        x=ladder.gap_x - 12, y_p95=max(y_p95, y_top), y_p05=min(y_p05, y_bottom),
        clipped_top=y_p95 < y_top, clipped_bottom=y_p05 > y_bottom,
        description=f"5 to 95 % band {format_number(p05)} to {format_number(p95)} per year",
    )
