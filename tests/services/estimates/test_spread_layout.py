"""Labels on the spread drawing: under their marks, never off the drawing, never on top of
one another (positions and widths worked by hand from the 8.6-units-a-character rule)."""

import pytest

from app.services.estimates.spread_layout import (
    CHAR_WIDTH,
    DRAWING_WIDTH,
    mark_label,
    place_labels,
)


def test_a_label_reads_name_star_and_value_or_only_the_value_when_names_are_hidden() -> None:
    assert mark_label("M. Penhallow", True, 0.03) == "M. Penhallow* · 3.0e-2"
    assert mark_label("A. Okafor", False, 3e-3) == "A. Okafor · 3.0e-3"
    assert mark_label(None, True, 3e-3) == "3.0e-3"


def test_a_label_at_either_end_of_the_axis_is_moved_inwards_to_stay_on_the_drawing() -> None:
    label = "Desmond Achterberg · 1.0e-1"  # 27 characters: 232.2 units wide
    (right, _), (left, _) = place_labels([label, label], [1.0, 0.0])
    assert right == pytest.approx(DRAWING_WIDTH - 27 * CHAR_WIDTH / 2)  # 883.9, not 960
    assert left == pytest.approx(27 * CHAR_WIDTH / 2)  # 116.1, not 40


def test_far_apart_labels_share_a_line_and_overlapping_ones_take_the_next_free_line() -> None:
    labels = ["A · 1.0e-3", "B · 1.0e-2", "C · 1.1e-2", "D · 1.0e-1"]  # 10 chars: 86 units
    # centres 40 + 920·p, half-width 43: 40 -> 43.0 (pushed in), 500, 518.4, 960 -> 957.0
    places = place_labels(labels, [0.0, 0.5, 0.52, 1.0])
    assert [line for _x, line in places] == [0, 0, 1, 0]  # only B and C overlap (18.4 apart)
    assert [round(x, 1) for x, _line in places] == [43.0, 500.0, 518.4, 957.0]
