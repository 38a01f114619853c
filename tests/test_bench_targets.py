"""The benchmark's verdicts: a figure's ratio to its target, and the flatness of an edit's cost."""

import pytest

from bench.targets import flatness, judge


def test_a_figure_above_its_target_fails_with_the_ratio_shown() -> None:
    row = judge(10_000, "edit_p99_ms", 30.0)  # the target is 20 ms: 30 / 20 = 1.5
    assert (row.result, row.ratio, row.target) == ("FAIL", pytest.approx(1.5), 20.0)
    assert judge(10_000, "edit_p99_ms", 20.0).result == "PASS"  # at the target passes


def test_a_target_stated_up_to_10000_scenarios_only_reports_at_50000() -> None:
    assert judge(10_000, "overview_ms", 400.0).result == "FAIL"
    assert judge(50_000, "overview_ms", 400.0).result == "info"
    assert judge(50_000, "import_s", 24.0).result == "PASS"  # 25 s at 50,000


def test_a_refused_import_fails_and_a_skipped_one_is_marked_skipped() -> None:
    assert judge(50_000, "import_s", None, "refused", failed=True).result == "FAIL"
    assert judge(50_000, "import_s", None, "no time").result == "SKIP"


def test_edit_cost_is_flat_when_every_size_is_within_1_3_times_the_smallest() -> None:
    rows = [judge(1_000, "edit_p50_ms", 10.0), judge(50_000, "edit_p50_ms", 12.0),
            judge(1_000, "edit_p99_ms", 15.0), judge(50_000, "edit_p99_ms", 30.0)]
    p50, p99 = flatness(rows)
    assert (p50.figure, p50.result) == (pytest.approx(1.2), "PASS")  # 12 / 10
    assert (p99.figure, p99.result) == (pytest.approx(2.0), "FAIL")  # 30 / 15
