"""SIF verification (issue 9, item 4): proof-test coverage and mission time, where the
simplified equations stop holding, subsystems summed, and the SIL capped by HFT.

Sources: IEC 61508-6:2010 Annex B, B.3.2.2 simplified equations (from memory; REFERENCE.md
section 2, whose table values are computed from them); proof-test coverage form as in
ISA-TR84.00.02 (from memory); minimum HFT by SIL, IEC 61511-1:2016, 11.4, Table 6 (from memory);
SIL bands IEC 61511-1:2016 Table 4 (values secondary). A year is 8760 h.
"""

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import integrate

from app.likelihood.proof_test import (
    SIMPLIFIED_LIMIT,
    Architecture,
    SifInputs,
    pfd_avg,
    simplified_check,
    storable_pfd,
)
from app.likelihood.sif_verification import (
    SYSTEMATIC_CAPABILITY_NOTE,
    Subsystem,
    SubsystemRole,
    minimum_hft,
    sil_allowed_by_hft,
    sil_supported_by_pfd,
    verify_sif,
)
from app.likelihood.types import DemandMode, LikelihoodInputError
from app.likelihood.units import HOURS_PER_MONTH, HOURS_PER_WEEK, HOURS_PER_YEAR

A = Architecture
SENSORS, LOGIC, FINAL = (SubsystemRole.SENSORS, SubsystemRole.LOGIC_SOLVER,
                         SubsystemRole.FINAL_ELEMENTS)


def annex(arch: Architecture, lam: float, dc: float, beta: float | None = None) -> SifInputs:
    """REFERENCE section 2 setup: lambda_D = lambda/2, beta_D = beta/2, MTTR = MRT = 8 h, T1 1 y."""
    return SifInputs(architecture=arch, lambda_du=lam / 2 * (1 - dc), lambda_dd=lam / 2 * dc,
                     beta=beta, proof_test_interval_hours=8760)


def test_proof_test_coverage_and_mission_time_by_hand():
    # 1oo1, lambda_DU 1e-6/h, no detected failures, T1 8760 h, coverage 90 %, mission 10 years,
    # MRT 8 h: 0.9 x 1e-6 x (4380 + 8) + 0.1 x 1e-6 x (43800 + 8) = 3.9492e-3 + 4.3808e-3.
    inputs = SifInputs(architecture=A.ONE_OO_ONE, lambda_du=1e-6, lambda_dd=0.0,
                       proof_test_interval_hours=8760, proof_test_coverage=0.9,
                       mission_time_hours=87600)
    assert pfd_avg(inputs) == pytest.approx(3.9492e-3 + 4.3808e-3, rel=1e-12)
    full = SifInputs(architecture=A.ONE_OO_ONE, lambda_du=1e-6, lambda_dd=0.0,
                     proof_test_interval_hours=8760)
    assert pfd_avg(full) == pytest.approx(1e-6 * 4388, rel=1e-12)  # coverage 1: as before


@pytest.mark.parametrize(
    ("more", "rule"),
    [({"proof_test_coverage": 1.2}, "coverage_range"),
     ({"proof_test_coverage": 0.8}, "mission_time_required"),
     ({"proof_test_coverage": 0.8, "mission_time_hours": 100.0}, "mission_time_required")],
    ids=["coverage-over-1", "no-mission-time", "mission-shorter-than-t1"],
)
def test_coverage_and_mission_time_are_checked_naming_the_rule(more, rule):
    with pytest.raises(LikelihoodInputError) as raised:
        SifInputs(architecture=A.ONE_OO_ONE, lambda_du=1e-6, lambda_dd=0.0,
                  proof_test_interval_hours=8760, **more)
    assert raised.value.rule == rule


def test_a_pfd_above_one_is_refused_as_a_value_to_store_and_warned():
    # lambda_DU 1e-4/h over 10 years: lambda T1 = 8.76; 1e-4 x (43800 + 8) = 4.38, not a PFD.
    inputs = SifInputs(architecture=A.ONE_OO_ONE, lambda_du=1e-4, lambda_dd=0.0,
                       proof_test_interval_hours=87600)
    assert pfd_avg(inputs) == pytest.approx(4.3808, rel=1e-12)
    with pytest.raises(LikelihoodInputError) as raised:
        storable_pfd(inputs)
    assert raised.value.rule == "pfd_above_one"
    check = simplified_check(inputs)
    assert not check.holds and check.lambda_du_t == pytest.approx(8.76)
    assert "not small compared with 1" in check.message


def test_a_storable_pfd_is_the_pfd_when_the_equations_hold():
    inputs = annex(A.ONE_OO_ONE, 1e-6, 0.0)
    assert storable_pfd(inputs) == pfd_avg(inputs)
    assert simplified_check(inputs).holds


def test_the_simplified_limit_is_where_the_linear_form_drifts_past_3_percent():
    # Common practice, no source, for the threshold itself; the drift is checked with scipy:
    # exact average of 1 - exp(-lambda t) over [0, T] (Rausand 2014 ch. 8, from memory).
    def drift(x: float) -> float:
        exact, _ = integrate.quad(lambda t: -math.expm1(-t), 0, x)
        return (x / 2) / (exact / x) - 1

    assert drift(SIMPLIFIED_LIMIT) == pytest.approx(0.0336, abs=5e-4)
    assert drift(0.01) < 0.004


def test_one_definition_of_week_month_and_year():
    assert (HOURS_PER_WEEK, HOURS_PER_MONTH, HOURS_PER_YEAR) == (168, 730.0, 8760)


def test_subsystem_pfd_sums_and_the_sil_follows_the_sum():
    # REFERENCE section 2 (computed): 1oo2 lambda 1e-6 DC 0 beta 10 % -> 2.25e-4;
    # 1oo1 lambda 1e-7 DC 90 % -> 2.23e-5; 1oo1 lambda 1e-6 DC 0 -> 2.19e-3.
    # Sum by hand 2.4373e-3 -> SIL 2 band [1e-3, 1e-2); final element 1oo1 (HFT 0) allows
    # SIL 2 in low demand, so SIL 2 stands.
    verified = verify_sif([
        Subsystem(SENSORS, annex(A.ONE_OO_TWO, 1e-6, 0.0, 0.1)),
        Subsystem(LOGIC, annex(A.ONE_OO_ONE, 1e-7, 0.9)),
        Subsystem(FINAL, annex(A.ONE_OO_ONE, 1e-6, 0.0)),
    ])
    assert [r.pfd_avg for r in verified.subsystems] == pytest.approx(
        [2.25e-4, 2.23e-5, 2.19e-3], rel=1e-2)
    assert verified.pfd_avg == pytest.approx(sum(r.pfd_avg for r in verified.subsystems),
                                             rel=1e-15)
    assert verified.pfd_avg == pytest.approx(2.4373e-3, rel=1e-2)
    assert (verified.sil_by_pfd, verified.sil_by_hft, verified.sil_supported) == (2, 2, 2)
    assert not verified.governed_by_hft
    assert verified.systematic_capability_note == SYSTEMATIC_CAPABILITY_NOTE


def test_hft_caps_the_sil_the_pfd_would_support():
    # By hand: 2.23e-5 (2oo3, 1e-6, DC 90 %, beta 10 %) + 2.59e-6 (1oo1, 1e-7, DC 99 %)
    # + 2.23e-4 (1oo1, 1e-6, DC 90 %) = 2.48e-4 -> SIL 3 by PFD. The 1oo1 final element has
    # HFT 0: Table 6 (from memory) allows SIL 2 in low demand and SIL 1 in high demand.
    parts = [
        Subsystem(SENSORS, annex(A.TWO_OO_THREE, 1e-6, 0.9, 0.1)),
        Subsystem(LOGIC, annex(A.ONE_OO_ONE, 1e-7, 0.99)),
        Subsystem(FINAL, annex(A.ONE_OO_ONE, 1e-6, 0.9)),
    ]
    low = verify_sif(parts)
    assert low.pfd_avg == pytest.approx(2.23e-5 + 2.59e-6 + 2.23e-4, rel=1e-2)
    assert (low.sil_by_pfd, low.sil_by_hft, low.sil_supported) == (3, 2, 2)
    assert low.governed_by_hft
    assert low.hft_citation == (
        "IEC 61511-1:2016, clause 11.4, Table 6 (minimum hardware fault tolerance)")
    assert low.hft_verify_against_copy
    assert verify_sif(parts, DemandMode.HIGH).sil_supported == 1


@pytest.mark.parametrize(
    ("sil", "low", "high"), [(1, 0, 0), (2, 0, 1), (3, 1, 1), (4, 2, 2)])
def test_minimum_hft_by_sil(sil, low, high):
    # IEC 61511-1:2016, 11.4, Table 6 (from memory; REFERENCE section 1).
    assert (minimum_hft(sil, DemandMode.LOW), minimum_hft(sil, DemandMode.HIGH)) == (low, high)


def test_sil_allowed_by_hft_and_by_pfd():
    assert [sil_allowed_by_hft(h, DemandMode.LOW) for h in (0, 1, 2)] == [2, 3, 4]
    assert [sil_allowed_by_hft(h, DemandMode.HIGH) for h in (0, 1, 2)] == [1, 3, 4]
    # Table 4 bands (secondary): 0.1 is no SIL; below 1e-5 claims SIL 4 at most.
    assert [sil_supported_by_pfd(p) for p in (0.1, 0.05, 5e-3, 5e-4, 5e-5, 1e-7)] == [
        None, 1, 2, 3, 4, 4]


def test_a_sif_needs_each_role_once():
    part = Subsystem(SENSORS, annex(A.ONE_OO_ONE, 1e-6, 0.0))
    for subsystems in ([], [part, part]):
        with pytest.raises(LikelihoodInputError) as raised:
            verify_sif(subsystems)
        assert raised.value.rule == "subsystem_roles"


rates = st.floats(min_value=1e-9, max_value=1e-5)
archs = st.sampled_from(list(Architecture))


@given(st.lists(st.tuples(archs, rates, st.floats(0, 0.99)), min_size=1, max_size=3))
def test_the_sum_is_at_least_each_subsystem(parts):
    roles = list(SubsystemRole)
    subsystems = [Subsystem(roles[i], annex(a, lam, dc, 0.1)) for i, (a, lam, dc) in
                  enumerate(parts)]
    verified = verify_sif(subsystems)
    assert all(verified.pfd_avg >= r.pfd_avg for r in verified.subsystems)
    if verified.sil_supported is not None:
        assert verified.sil_supported <= verified.sil_by_hft
