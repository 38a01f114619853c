"""SIL bands of IEC 61511-1:2016 at every edge, low demand (RRF, PFD) and high demand (PFH).

Bands are half-open; a value a hair off an edge, as products of decimals give, counts as on it.
"""

import pytest
from hypothesis import assume, given
from hypothesis import strategies as st

from app.likelihood.sil import (
    HOURS_PER_YEAR,
    SIL_PFD_RANGES,
    SIL_PFH_RANGES,
    SIL_RRF_RANGES,
    pfd_band,
    sil_for_pfh,
    sil_for_rrf,
    sil_target,
)
from app.likelihood.types import DemandMode, LikelihoodInputError, SilStatus

LOW_DEMAND = "IEC 61511-1:2016 Table 4, low demand (values secondary; table number from memory)"
HIGH_DEMAND = "IEC 61511-1:2016 Table 5, high demand (values secondary; table number from memory)"
REF_1 = "REFERENCE section 1 consequences, from IEC 61511-1:2016 Table 4 (secondary)"
DEMAND_LIMIT = "IEC 61508-4:2010, 3.5.16: low demand is at most once a year (secondary)"

NONE, BELOW, SIL, BEYOND = (
    SilStatus.NONE_NEEDED,
    SilStatus.BELOW_SIL1,
    SilStatus.SIL,
    SilStatus.BEYOND_ONE_FUNCTION,
)


def test_the_tables_hold_the_published_decades():
    assert SIL_PFD_RANGES == {1: (1e-2, 1e-1), 2: (1e-3, 1e-2), 3: (1e-4, 1e-3), 4: (1e-5, 1e-4)}
    assert SIL_RRF_RANGES == {1: (10, 100), 2: (100, 1e3), 3: (1e3, 1e4), 4: (1e4, 1e5)}
    assert SIL_PFH_RANGES == {1: (1e-6, 1e-5), 2: (1e-7, 1e-6), 3: (1e-8, 1e-7), 4: (1e-9, 1e-8)}
    assert HOURS_PER_YEAR == 8760  # 365 days x 24 h, the year used throughout


@pytest.mark.parametrize(
    ("rrf", "status", "sil", "label", "source"),
    [
        (0.25, NONE, None, "None needed", REF_1),
        (1.0, NONE, None, "None needed", REF_1),
        (1.000001, BELOW, None, "Below SIL 1 (RRF ≤ 10)", LOW_DEMAND),
        (10.0, BELOW, None, "Below SIL 1 (RRF ≤ 10)", REF_1),  # PFD 0.1 is not below 0.1
        (10.00001, SIL, 1, "SIL 1", LOW_DEMAND),
        (25.0, SIL, 1, "SIL 1", LOW_DEMAND),
        (100.0, SIL, 1, "SIL 1", REF_1),
        (100.00000000000001, SIL, 1, "SIL 1", REF_1),  # a hair over, as products give
        (100.001, SIL, 2, "SIL 2", REF_1),  # just over 100
        (1_000.0, SIL, 2, "SIL 2", LOW_DEMAND),
        (1_000.01, SIL, 3, "SIL 3", LOW_DEMAND),
        (10_000.0, SIL, 3, "SIL 3", LOW_DEMAND),
        (10_000.1, SIL, 4, "SIL 4", LOW_DEMAND),
        (100_000.0, SIL, 4, "SIL 4", LOW_DEMAND),
        (100_001.0, BEYOND, None, "Beyond one function (RRF > 100,000)", REF_1),
        (float("inf"), BEYOND, None, "Beyond one function (RRF > 100,000)", REF_1),
    ],
)
def test_low_demand_band_for_each_rrf(rrf, status, sil, label, source):
    target = sil_for_rrf(rrf)
    assert (target.status, target.sil, target.label) == (status, sil, label), source
    assert target.demand_mode is DemandMode.LOW
    assert target.required_rrf == max(1.0, rrf)


@pytest.mark.parametrize(
    ("rrf", "sil", "source"),
    [
        (1 / (0.1 * 0.1), 1, "99.99999999999999, meant 100; REFERENCE section 1 caution"),
        (0.9 / 0.009, 1, "100.00000000000001, meant 100; REFERENCE section 1 caution"),
        (1 / (0.1 * 0.1 * 0.1), 2, "999.9999999999998, meant 1000: SIL 2; IEC 61511-1 Table 4"),
        (3 * 0.1 * 1e4, 3, "3000.0000000000005, meant 3000: SIL 3; IEC 61511-1 Table 4"),
    ],
)
def test_rrf_from_float_products_lands_in_the_intended_band(rrf, sil, source):
    assert sil_for_rrf(rrf).sil == sil, source


@pytest.mark.parametrize(
    ("computed", "meant"),
    [(1 / (0.1 * 0.1), 100.0), (0.9 / 0.009, 100.0), (1 / (0.1 * 0.1 * 0.1), 1000.0)],
)
def test_those_float_products_really_miss_their_decimal_values(computed, meant):
    assert computed != meant
    assert computed == pytest.approx(meant, rel=1e-14, abs=0)


@pytest.mark.parametrize(
    ("pfd", "sil", "source"),
    [
        (1.0, None, LOW_DEMAND),
        (0.1, None, REF_1),  # the top edge of SIL 1 is open
        (0.09999, 1, LOW_DEMAND),
        (0.01, 1, LOW_DEMAND),
        (0.009999999999999998, 1, "a hair below 0.01 counts as on it; REFERENCE caution"),
        (0.1 * 0.1, 1, "0.010000000000000002 from decimals; REFERENCE caution"),
        (0.00999, 2, LOW_DEMAND),
        (1e-3, 2, LOW_DEMAND),
        (9.99e-4, 3, LOW_DEMAND),
        (1e-4, 3, LOW_DEMAND),
        (9.99e-5, 4, LOW_DEMAND),
        (1e-5, 4, LOW_DEMAND),
        (9.99e-6, None, LOW_DEMAND),
    ],
)
def test_pfd_band_for_each_pfd(pfd, sil, source):
    assert pfd_band(pfd) == sil, source


@pytest.mark.parametrize(
    ("pfh", "sil", "source"),
    [
        (1e-4, None, HIGH_DEMAND),
        (1e-5, None, HIGH_DEMAND),  # the top edge of SIL 1 is open
        (9.99e-6, 1, HIGH_DEMAND),
        (1e-6, 1, HIGH_DEMAND),
        (9.99e-7, 2, HIGH_DEMAND),
        (1e-7, 2, HIGH_DEMAND),
        (9.99e-8, 3, HIGH_DEMAND),
        (1e-8, 3, HIGH_DEMAND),
        (9.99e-9, 4, HIGH_DEMAND),
        (1e-9, 4, HIGH_DEMAND),
        (0.999999999999e-9, 4, "a hair below 1e-9 counts as on it; REFERENCE caution"),
        (9.99e-10, None, HIGH_DEMAND),
    ],
)
def test_high_demand_band_for_each_pfh(pfh, sil, source):
    assert sil_for_pfh(pfh) == sil, source


@pytest.mark.parametrize(
    ("mitigated", "tolerable", "mode", "status", "sil", "source"),
    [
        (1e-4, 1e-4, DemandMode.LOW, NONE, None, "meets target exactly; REFERENCE section 1"),
        (1.0, 1e-3, DemandMode.LOW, SIL, 2, DEMAND_LIMIT),  # once a year is still low demand
        (1.5, 0.5, DemandMode.HIGH, BELOW, None, DEMAND_LIMIT),  # PFH 5.7e-5 per hour
        (2.0, 1e-4, DemandMode.HIGH, SIL, 3, HIGH_DEMAND),  # PFH 1.14e-8 per hour
        (2.0, 8.76e-3, DemandMode.HIGH, SIL, 1, HIGH_DEMAND),  # PFH exactly 1e-6 per hour
        (2.0, 1e-6, DemandMode.HIGH, BEYOND, None, HIGH_DEMAND),  # PFH 1.1e-10 per hour
        (2.0, 3.0, DemandMode.HIGH, NONE, None, "meets target: nothing to add"),
    ],
)
def test_sil_target_picks_demand_mode_and_band(mitigated, tolerable, mode, status, sil, source):
    target = sil_target(mitigated, tolerable)
    assert (target.demand_mode, target.status, target.sil) == (mode, status, sil), source


def test_high_demand_target_asks_for_the_tolerable_frequency_per_hour():
    target = sil_target(2.0, 1e-4)
    assert target.required_pfh == pytest.approx(1e-4 / 8760, rel=1e-15, abs=0)  # 8760 h a year
    assert target.required_pfd is None
    assert target.required_rrf == 2e4
    assert target.label == "SIL 3"


def test_high_demand_labels_name_the_pfh_edge():
    assert sil_target(2.0, 0.5).label == "Below SIL 1 (PFH ≥ 1e-5 per hour)"
    assert sil_target(2.0, 1e-6).label == "Beyond one function (PFH < 1e-9 per hour)"


def test_low_demand_target_gives_the_pfd_an_added_function_needs():
    target = sil_target(2.5e-4, 1e-5)
    assert target.required_rrf == 25.0
    assert target.required_pfd == pytest.approx(0.04, rel=1e-15, abs=0)
    assert target.required_pfh is None


@pytest.mark.parametrize("rrf", [0.0, -1.0, float("nan")])
def test_an_rrf_must_be_above_zero(rrf):
    with pytest.raises(LikelihoodInputError) as raised:
        sil_for_rrf(rrf)
    assert raised.value.rule == "rrf_positive"


@pytest.mark.parametrize(
    ("mitigated", "tolerable", "rule"),
    [(-1e-3, 1e-4, "frequency_positive"), (1e-3, 0.0, "frequency_positive"),
     (1e-3, 1e-300, "frequency_range")],
)
def test_sil_target_rejects_negative_or_zero_frequencies(mitigated, tolerable, rule):
    with pytest.raises(LikelihoodInputError) as raised:
        sil_target(mitigated, tolerable)
    assert raised.value.rule == rule


def _near_an_edge(pfd: float) -> bool:
    return any(abs(pfd / edge - 1) < 1e-8 for edge in (1e-1, 1e-2, 1e-3, 1e-4, 1e-5))


@given(st.floats(min_value=1e-6, max_value=1.0))
def test_pfd_band_and_rrf_band_agree(pfd):
    assume(not _near_an_edge(pfd))
    target = sil_for_rrf(1 / pfd)
    assert pfd_band(pfd) == target.sil
    assert (target.status is SilStatus.SIL) == (pfd_band(pfd) is not None)


@given(st.floats(min_value=1.0, max_value=1e7), st.floats(min_value=1.0, max_value=1e7))
def test_a_larger_rrf_never_needs_a_lower_sil(a, b):
    low, high = sorted((a, b))
    order = [NONE, BELOW, SIL, BEYOND]
    first, second = sil_for_rrf(low), sil_for_rrf(high)
    assert order.index(first.status) <= order.index(second.status)
    if first.sil is not None and second.sil is not None:
        assert first.sil <= second.sil
