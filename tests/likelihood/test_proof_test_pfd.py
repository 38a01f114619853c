"""PFDavg by the IEC 61508-6:2010 Annex B simplified equations, and the longest proof-test interval.

Equations from memory (REFERENCE section 2). T1 = 8760 h is one year of 8760 h.
"""

import math

import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy import integrate

from app.likelihood.proof_test import (
    PROOF_TEST_INTERVAL_CAP_HOURS,
    Architecture,
    SifInputs,
    exact_1oo1_time_average,
    longest_proof_test_interval,
    pfd_avg,
    with_interval,
)
from app.likelihood.types import LikelihoodInputError

TABLE = (
    "REFERENCE section 2 table, computed from IEC 61508-6:2010 B.3.2.2 equations (from memory); "
    "lambda_D = lambda/2, beta_D = beta/2, MTTR = MRT = 8 h, T1 = 8760 h"
)
A = Architecture


def annex_setup(architecture: Architecture, lam: float, dc: float, beta: float | None) -> SifInputs:
    """The annex's table setup: half the total rate is dangerous, split by diagnostic coverage."""
    lambda_d = lam / 2
    return SifInputs(
        architecture=architecture,
        lambda_du=lambda_d * (1 - dc),
        lambda_dd=lambda_d * dc,
        beta=beta,
        proof_test_interval_hours=8760,
    )


ROWS = [
    (A.ONE_OO_ONE, 1e-7, None, (2.19e-4, 8.80e-5, 2.23e-5, 2.59e-6)),
    (A.ONE_OO_ONE, 1e-6, None, (2.19e-3, 8.80e-4, 2.23e-4, 2.59e-5)),
    (A.TWO_OO_TWO, 1e-6, None, (4.39e-3, 1.76e-3, 4.46e-4, 5.18e-5)),
    (A.ONE_OO_TWO, 1e-6, 0.1, (2.25e-4, 8.88e-5, 2.22e-5, 2.39e-6)),
    (A.TWO_OO_THREE, 1e-6, 0.1, (2.35e-4, 9.06e-5, 2.23e-5, 2.39e-6)),
]
CASES = [
    pytest.param(arch, lam, dc, beta, pfd, TABLE, id=f"{arch}-{lam:g}-DC{dc:.0%}")
    for arch, lam, beta, pfds in ROWS
    for dc, pfd in zip((0.0, 0.6, 0.9, 0.99), pfds, strict=True)
]


@pytest.mark.parametrize(("architecture", "lam", "dc", "beta", "expected", "source"), CASES)
def test_pfd_avg_matches_the_computed_table(architecture, lam, dc, beta, expected, source):
    # The table is printed to three figures, so agreement is to 1 % (half a unit in the last).
    computed = pfd_avg(annex_setup(architecture, lam, dc, beta))
    assert computed == pytest.approx(expected, rel=1e-2, abs=0), source


def test_2oo3_keeps_the_detected_common_cause_term():
    # Some public copies drop beta_D x lambda_DD x MTTR. At DC 99 % that term is 8 % of the
    # PFDavg, so the table row would catch its loss.
    inputs = annex_setup(A.TWO_OO_THREE, 1e-6, 0.99, 0.1)
    term = 0.05 * 4.95e-7 * 8  # beta_D = beta / 2, lambda_DD = 0.99 x 5e-7, MTTR 8 h
    assert pfd_avg(inputs) == pytest.approx(2.39e-6, rel=1e-2, abs=0), TABLE
    assert pfd_avg(inputs) - term != pytest.approx(2.39e-6, rel=5e-2, abs=0)


def test_1oo2_written_out_independently_for_one_case():
    # 1oo2, lambda = 2e-6/h, DC 60 %, beta 5 %, beta_D 2 %, T1 = 2 years, MTTR 8 h, MRT 24 h.
    lambda_du, lambda_dd, beta, beta_d, t1, mttr, mrt = 4e-7, 6e-7, 0.05, 0.02, 17520, 8, 24
    lambda_d = lambda_du + lambda_dd
    t_ce = lambda_du / lambda_d * (t1 / 2 + mrt) + lambda_dd / lambda_d * mttr
    t_ge = lambda_du / lambda_d * (t1 / 3 + mrt) + lambda_dd / lambda_d * mttr
    independent = 2 * ((1 - beta_d) * lambda_dd + (1 - beta) * lambda_du) ** 2 * t_ce * t_ge
    expected = independent + beta_d * lambda_dd * mttr + beta * lambda_du * (t1 / 2 + mrt)
    inputs = SifInputs(
        architecture=A.ONE_OO_TWO, lambda_du=lambda_du, lambda_dd=lambda_dd, beta=beta,
        beta_d=beta_d, proof_test_interval_hours=t1, mttr_hours=mttr, mrt_hours=mrt,
    )
    assert pfd_avg(inputs) == pytest.approx(expected, rel=1e-12, abs=0)
    # By hand: tCE 3518.4 h, tGE 2350.4 h; independent part 1.5498e-5, detected common cause
    # 9.6e-8, undetected common cause 1.7568e-4; total 1.9127e-4.
    assert expected == pytest.approx(1.9127e-4, rel=1e-4, abs=0)


def test_defaults_are_mttr_8_h_mrt_equal_to_mttr_and_beta_d_half_of_beta():
    inputs = SifInputs(
        architecture=A.ONE_OO_TWO, lambda_du=1e-6, lambda_dd=1e-6, beta=0.1,
        proof_test_interval_hours=8760,
    )
    assert (inputs.mttr_hours, inputs.effective_mrt_hours, inputs.effective_beta_d) == (8, 8, 0.05)


def test_1oo1_simplified_average_is_close_to_the_exact_time_average():
    # Rausand (2014) ch. 8, from memory: mean of 1 - exp(-lambda t) over [0, T].
    lambda_du, t1 = 1e-6, 8760.0
    integral, _ = integrate.quad(lambda t: -math.expm1(-lambda_du * t), 0, t1)
    exact = integral / t1
    assert exact_1oo1_time_average(lambda_du, t1) == pytest.approx(exact, rel=1e-10, abs=0)
    assert exact == pytest.approx(4.3672e-3, rel=1e-4, abs=0)
    simplified = pfd_avg(
        SifInputs(architecture=A.ONE_OO_ONE, lambda_du=lambda_du, lambda_dd=0.0,
                  proof_test_interval_hours=t1, mttr_hours=0.0)
    )
    assert simplified == pytest.approx(4.38e-3, rel=1e-12, abs=0)  # lambda T / 2
    # exact = x/2 - x^2/6 + ..., so lambda T / 2 errs on the safe side by about x / 3: 0.29 %.
    assert simplified / exact - 1 == pytest.approx(lambda_du * t1 / 3, rel=0.01, abs=0)


@pytest.mark.parametrize("x", [1e-12, 1e-6, 1e-3, 0.2, 0.49, 0.5, 1.0, 5.0, 50.0])
def test_exact_time_average_matches_scipy_quad_at_every_scale(x):
    integral, _ = integrate.quad(lambda t: -math.expm1(-x * t), 0, 1, epsabs=0, epsrel=1e-13)
    assert exact_1oo1_time_average(x, 1.0) == pytest.approx(integral, rel=1e-10, abs=0)


ARCHITECTURES = [
    (A.ONE_OO_ONE, None),
    (A.ONE_OO_TWO, 0.1),
    (A.TWO_OO_TWO, None),
    (A.TWO_OO_THREE, 0.1),
]


@pytest.mark.parametrize(("architecture", "beta"), ARCHITECTURES)
@pytest.mark.parametrize("target", [1e-2, 1e-3])
def test_longest_interval_meets_the_target_on_the_nose(architecture, beta, target):
    inputs = annex_setup(architecture, 1e-6, 0.6, beta)
    hours = longest_proof_test_interval(inputs, target)
    assert hours is not None and hours < PROOF_TEST_INTERVAL_CAP_HOURS
    assert pfd_avg(with_interval(inputs, hours)) <= target
    assert pfd_avg(with_interval(inputs, hours)) == pytest.approx(target, rel=1e-8, abs=0)
    assert pfd_avg(with_interval(inputs, hours * (1 + 1e-6))) > target


@given(
    st.sampled_from(ARCHITECTURES),
    st.floats(min_value=1e-8, max_value=1e-5),
    st.floats(min_value=0.0, max_value=0.99),
    st.floats(min_value=1e-5, max_value=0.1),
)
def test_longest_interval_round_trips_for_any_function(arch_beta, lam, dc, target):
    architecture, beta = arch_beta
    inputs = annex_setup(architecture, lam, dc, beta)
    hours = longest_proof_test_interval(inputs, target)
    if hours is None:
        assert pfd_avg(with_interval(inputs, 1e-3)) > target
    elif hours == PROOF_TEST_INTERVAL_CAP_HOURS:
        assert pfd_avg(with_interval(inputs, hours)) <= target
    else:
        assert pfd_avg(with_interval(inputs, hours)) == pytest.approx(target, rel=1e-6, abs=0)


def test_no_interval_when_repair_time_alone_breaks_the_target():
    # All failures detected: PFD is lambda_DD x MTTR = 1e-4 x 8 whatever the interval.
    inputs = SifInputs(architecture=A.ONE_OO_ONE, lambda_du=1e-9, lambda_dd=1e-4,
                       proof_test_interval_hours=8760)
    assert longest_proof_test_interval(inputs, 1e-4) is None


def test_the_search_stops_at_the_cap_of_100_years():
    inputs = SifInputs(architecture=A.ONE_OO_ONE, lambda_du=1e-10, lambda_dd=0.0,
                       proof_test_interval_hours=8760)
    assert PROOF_TEST_INTERVAL_CAP_HOURS == 100 * 8760
    assert longest_proof_test_interval(inputs, 0.1) == PROOF_TEST_INTERVAL_CAP_HOURS


@pytest.mark.parametrize(
    ("changes", "rule", "field"),
    [
        ({"lambda_du": -1e-6}, "failure_rate_range", "lambda_du"),
        ({"lambda_dd": math.nan}, "failure_rate_range", "lambda_dd"),
        ({"lambda_du": 0.0, "lambda_dd": 0.0}, "failure_rate_positive", "lambda_du"),
        ({"proof_test_interval_hours": 0.0}, "proof_test_interval_positive",
         "proof_test_interval_hours"),
        ({"mttr_hours": -8.0}, "repair_time_range", "mttr_hours"),
        ({"mrt_hours": math.inf}, "repair_time_range", "mrt_hours"),
        ({"architecture": A.ONE_OO_TWO, "beta": None}, "beta_required", "beta"),
        ({"architecture": A.TWO_OO_THREE, "beta": 1.5}, "beta_range", "beta"),
        ({"beta": 0.1, "beta_d": -0.1}, "beta_range", "beta_d"),
        ({"architecture": "3oo4"}, "architecture", "architecture"),
    ],
)
def test_bad_function_data_is_refused_naming_rule_and_field(changes, rule, field):
    fields = {"architecture": A.ONE_OO_ONE, "lambda_du": 1e-6, "lambda_dd": 1e-6,
              "proof_test_interval_hours": 8760.0, **changes}
    with pytest.raises(LikelihoodInputError) as raised:
        SifInputs(**fields)
    assert (raised.value.rule, raised.value.step) == (rule, field)
    assert raised.value.message.startswith(f"{field}: ")


def test_the_target_pfd_must_be_a_probability():
    inputs = annex_setup(A.ONE_OO_ONE, 1e-6, 0.0, None)
    with pytest.raises(LikelihoodInputError) as raised:
        longest_proof_test_interval(inputs, 0.0)
    assert (raised.value.rule, raised.value.step) == ("probability_range", "Target PFD")
