"""The frequency ladder: positions on the log scale, checked as numbers, and the drawn SVG."""

import math
import xml.etree.ElementTree as ET

import pytest
from jinja2 import Environment, FileSystemLoader

from app.likelihood.frequency import compute_scenario
from app.likelihood.types import StepInput, StepKind
from app.services.worksheet.ladder import DECADE_HEIGHT, MARGIN_TOP, build_ladder, decade_range
from app.settings import PROJECT_ROOT

SVG = "{http://www.w3.org/2000/svg}"


def scenario(*steps: tuple[StepKind, float], tolerable: float = 1e-5):  # type: ignore[no-untyped-def]
    return compute_scenario([StepInput(kind, value, f"step {i}") for i, (kind, value)
                             in enumerate(steps)], tolerable)


IE, EC, IPL = StepKind.INITIATING_EVENT, StepKind.ENABLING_CONDITION, StepKind.IPL


def test_decades_run_from_one_per_year_to_1e_minus_8_with_one_height_per_decade() -> None:
    ladder = build_ladder(scenario((IE, 0.1), (IPL, 0.01)))
    assert [d.exponent for d in ladder.decades] == list(range(0, -9, -1))
    assert [d.label for d in ladder.decades][:3] == ["1", "1e-1", "1e-2"]
    steps = [b.y - a.y for a, b in zip(ladder.decades, ladder.decades[1:], strict=False)]
    assert steps == pytest.approx([DECADE_HEIGHT] * 8)
    assert ladder.decades[0].y == MARGIN_TOP


def test_each_point_sits_at_the_log_of_its_running_frequency() -> None:
    ladder = build_ladder(scenario((IE, 0.2), (EC, 0.5), (IPL, 0.01)))
    # 0.2 -> 0.1 -> 1e-3 per year: y = top + (0 - log10 f) * decade height
    expected = [MARGIN_TOP - math.log10(f) * DECADE_HEIGHT for f in (0.2, 0.1, 1e-3)]
    assert [m.y for m in ladder.marks] == pytest.approx(expected)
    assert ladder.mitigated.frequency == pytest.approx(1e-3)
    assert ladder.target_y == pytest.approx(MARGIN_TOP + 5 * DECADE_HEIGHT)
    assert ladder.gap_label == "gap +2.0 orders"
    assert not ladder.meets_target


def test_the_treads_share_the_plot_width_in_step_order() -> None:
    ladder = build_ladder(scenario((IE, 1.0), (IPL, 0.1), (IPL, 0.1)))
    assert [m.code for m in ladder.marks] == ["IE", "IPL", "IPL"]
    widths = {round(m.x_end - m.x_start, 6) for m in ladder.marks}
    assert len(widths) == 1
    assert ladder.marks[0].x_start == ladder.plot_left
    assert ladder.marks[-1].x_end == pytest.approx(ladder.plot_right)
    assert [(d.y_from, d.y_to) for d in ladder.drops] == [
        (ladder.marks[0].y, ladder.marks[1].y), (ladder.marks[1].y, ladder.marks[2].y)]


def test_the_range_widens_to_hold_a_value_outside_it() -> None:
    assert decade_range([3.0, 1e-10]) == (1, -10)
    ladder = build_ladder(scenario((IE, 5.0), (IPL, 1e-5), (IPL, 1e-5), tolerable=1e-9))
    assert ladder.decades[0].exponent == 1 and ladder.decades[-1].exponent == -10
    assert ladder.height == pytest.approx(MARGIN_TOP + 11 * DECADE_HEIGHT + 14)


def test_a_scenario_meeting_its_target_says_so() -> None:
    ladder = build_ladder(scenario((IE, 0.1), (IPL, 1e-3), (IPL, 1e-2)))
    assert ladder.meets_target and ladder.gap_label == "meets target"


def test_labels_of_a_mitigated_frequency_on_the_target_line_do_not_overlap() -> None:
    ladder = build_ladder(scenario((IE, 0.1), (IPL, 1e-4)))
    assert ladder.mitigated.y == pytest.approx(ladder.target_y)
    assert abs(ladder.mitigated_label_y - ladder.target_label_y) >= 13 - 1e-9


def test_the_svg_draws_with_inline_presentation_attributes() -> None:
    environment = Environment(loader=FileSystemLoader(PROJECT_ROOT / "templates"))
    ladder = build_ladder(scenario((IE, 0.1), (IPL, 0.1)))
    svg = ET.fromstring(environment.get_template("worksheet/_ladder.html").render(ladder=ladder))
    assert svg.tag == f"{SVG}svg"
    steps = svg.findall(f"{SVG}g[@data-ladder='step']")
    assert [float(g.get("data-y", "")) for g in steps] == pytest.approx(
        [m.y for m in ladder.marks], abs=0.01)
    target = svg.find(f"{SVG}line[@data-ladder='target']")
    assert target is not None and target.get("stroke") and target.get("stroke-dasharray")
    assert float(target.get("y1", "")) == pytest.approx(ladder.target_y)
    texts = ["".join(t.itertext()) for t in svg.iter(f"{SVG}text")]
    assert "gap +3.0 orders" in texts and "1.0e-2" in texts and "target 1.0e-5" in texts
    assert all(t.get("fill") for t in svg.iter(f"{SVG}text"))
