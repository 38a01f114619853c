"""Scenario arithmetic: worked cases, the ladder, input rules, and properties that always hold."""

import math

import pytest
from hypothesis import assume, given
from hypothesis import strategies as st

from app.likelihood.frequency import compute_scenario, validate_frequency, validate_probability
from app.likelihood.types import (
    DemandMode,
    LikelihoodInputError,
    SilStatus,
    StepInput,
    StepKind,
)

WORKED = "constructed worked case, REFERENCE section 8 (exact arithmetic)"
NO_SOURCE = "common practice, no source"

IE, EC, CM, IPL = (
    StepKind.INITIATING_EVENT,
    StepKind.ENABLING_CONDITION,
    StepKind.CONDITIONAL_MODIFIER,
    StepKind.IPL,
)


def worked_case(*, credit_relief_valve: bool) -> list[StepInput]:
    """REFERENCE section 8: a release scenario with two protection layers (invented)."""
    return [
        StepInput(IE, 0.1, "Level control fails"),
        StepInput(CM, 0.1, "Ignition"),
        StepInput(CM, 0.5, "Person present"),
        StepInput(CM, 0.5, "Fatality"),
        StepInput(IPL, 0.01, "Relief valve", credited=credit_relief_valve),
        StepInput(IPL, 0.1, "Operator responds to alarm"),
    ]


def test_worked_case_with_both_layers_meets_the_target():
    result = compute_scenario(worked_case(credit_relief_valve=True), 1e-5)
    assert result.mitigated_frequency == 2.5e-6, WORKED
    assert result.ratio == 0.25, WORKED
    assert result.gap_orders == pytest.approx(math.log10(0.25), rel=1e-15, abs=0)
    assert result.meets_target is True
    assert result.required_rrf == 1.0
    assert result.sil_target.status is SilStatus.NONE_NEEDED


def test_worked_case_without_the_relief_valve_needs_sil_1():
    result = compute_scenario(worked_case(credit_relief_valve=False), 1e-5)
    assert result.mitigated_frequency == 2.5e-4, WORKED
    assert result.required_rrf == 25.0, WORKED
    assert result.meets_target is False
    assert (result.sil_target.status, result.sil_target.sil) == (SilStatus.SIL, 1), WORKED
    assert result.sil_target.demand_mode is DemandMode.LOW  # 2.5e-4 demands a year


def test_products_are_reported_per_kind():
    result = compute_scenario(worked_case(credit_relief_valve=True), 1e-5)
    products = (
        result.initiating_frequency,
        result.enabling_product,
        result.modifier_product,
        result.ipl_product,
    )
    assert products == (0.1, 1.0, 0.025, 0.001), WORKED  # no enabling condition: product 1


def test_ladder_runs_initiating_enabling_modifier_credited_ipls_in_given_order():
    steps = [
        StepInput(IPL, 0.1, "Alarm"),
        StepInput(CM, 0.5, "Occupancy"),
        StepInput(IPL, 0.01, "Relief valve", credited=False),
        StepInput(EC, 0.25, "Winter"),
        StepInput(IE, 0.2, "Pump seal fails"),
        StepInput(CM, 0.1, "Ignition"),
        StepInput(IPL, 0.01, "Trip"),
    ]
    ladder = compute_scenario(steps, 1e-4).ladder
    assert [(p.label, p.factor, p.frequency_after) for p in ladder] == [
        ("Pump seal fails", 0.2, 0.2),
        ("Winter", 0.25, 0.05),
        ("Occupancy", 0.5, 0.025),
        ("Ignition", 0.1, 0.0025),
        ("Alarm", 0.1, 0.00025),
        ("Trip", 0.01, 2.5e-6),
    ]


def test_a_relief_valve_at_pfd_0_01_reduces_the_frequency_a_hundredfold():
    without = compute_scenario([StepInput(IE, 0.1)], 1e-5)
    with_valve = compute_scenario([StepInput(IE, 0.1), StepInput(IPL, 0.01, "PSV")], 1e-5)
    # Relief valve in clean service at PFD 0.01: common practice, no source.
    assert without.mitigated_frequency / with_valve.mitigated_frequency == 100.0, NO_SOURCE


@pytest.mark.parametrize(
    ("steps", "rule", "step", "message"),
    [
        (
            [StepInput(CM, 0.1, "Ignition")],
            "one_initiating_event", "",
            "A scenario needs exactly one initiating event (found none).",
        ),
        (
            [StepInput(IE, 0.1, "Seal leak"), StepInput(IE, 0.2, "Hose bursts")],
            "one_initiating_event", "Hose bursts",
            "Initiating event 'Hose bursts': a scenario needs exactly one initiating event "
            "(found 2: 'Seal leak', 'Hose bursts').",
        ),
        (
            [StepInput(IE, 0.0, "Seal leak")],
            "frequency_positive", "Seal leak",
            "Initiating event 'Seal leak': a frequency must be a finite number of events per "
            "year above 0 (got 0).",
        ),
        (
            [StepInput(IE, math.inf, "Seal leak")],
            "frequency_positive", "Seal leak",
            "Initiating event 'Seal leak': a frequency must be a finite number of events per "
            "year above 0 (got inf).",
        ),
        (
            [StepInput(IE, 0.1), StepInput(EC, 1.5, "Tank filling")],
            "probability_range", "Tank filling",
            "Enabling condition 'Tank filling': a probability must be greater than 0 and at "
            "most 1 (got 1.5).",
        ),
        (
            [StepInput(IE, 0.1), StepInput(CM, 0.0, "Ignition")],
            "probability_range", "Ignition",
            "Conditional modifier 'Ignition': a probability must be greater than 0 and at "
            "most 1 (got 0).",
        ),
        (
            [StepInput(IE, 0.1), StepInput(IPL, math.nan, "Trip", credited=False)],
            "probability_range", "Trip",
            "Independent protection layer 'Trip': a probability must be greater than 0 and at "
            "most 1 (got nan).",
        ),
        (
            [StepInput(IE, 0.1), StepInput("safeguard", 0.1, "Trip")],  # type: ignore[arg-type]
            "step_kind", "Trip",
            "Trip: unknown step kind 'safeguard' (known: initiating_event, enabling_condition, "
            "conditional_modifier, ipl).",
        ),
    ],
    ids=["no-ie", "two-ie", "ie-zero", "ie-inf", "ec-over-1", "cm-zero", "uncredited-nan", "kind"],
)
def test_each_input_rule_names_itself_and_the_step(steps, rule, step, message):
    with pytest.raises(LikelihoodInputError) as raised:
        compute_scenario(steps, 1e-4)
    assert (raised.value.rule, raised.value.step, raised.value.message) == (rule, step, message)
    assert str(raised.value) == message


@pytest.mark.parametrize("tolerable", [0.0, -1e-4, math.inf, math.nan])
def test_the_tolerable_frequency_must_be_finite_and_above_zero(tolerable):
    with pytest.raises(LikelihoodInputError) as raised:
        compute_scenario([StepInput(IE, 0.1)], tolerable)
    assert (raised.value.rule, raised.value.step) == ("frequency_positive", "Tolerable frequency")
    assert raised.value.message.startswith("Tolerable frequency: a frequency must be")


def test_the_validators_return_floats_and_accept_the_edges():
    assert validate_probability(1, "Always") == 1.0
    assert type(validate_probability(1, "Always")) is float
    assert validate_frequency(1e-9, "Tiny") == 1e-9
    assert validate_frequency(1e4, "Often") == 1e4
    assert validate_probability(1e-9, "Tiny") == 1e-9


@pytest.mark.parametrize(
    ("call", "rule"),
    [
        (lambda: validate_frequency(1e-300, "Tiny"), "frequency_range"),
        (lambda: validate_probability(2.0, "Two"), "probability_range"),
        (lambda: validate_frequency(5e-324, "Tiny"), "frequency_range"),
        (lambda: validate_frequency(1.0001e4, "Often"), "frequency_range"),
        (lambda: validate_probability(1e-300, "Tiny"), "probability_range"),
        (lambda: validate_probability(9.9e-10, "Tiny"), "probability_range"),
    ],
    ids=["f-1e-300", "p-two", "f-denormal", "f-over-1e4", "p-1e-300", "p-below-1e-9"],
)
def test_inputs_outside_what_lopa_can_mean_are_refused_naming_the_rule(call, rule):
    # Issue 9, item 6: a frequency 1e-9..1e4 per year, a probability or PFD 1e-9..1
    # (common practice, no source). The message names the bounds.
    with pytest.raises(LikelihoodInputError) as raised:
        call()
    assert raised.value.rule == rule
    assert "1e-09" in raised.value.message or "at most 1" in raised.value.message


frequencies = st.floats(min_value=1e-6, max_value=100.0)
probabilities = st.floats(min_value=1e-6, max_value=1.0)
factor_kinds = st.sampled_from([EC, CM, IPL])


@st.composite
def scenarios(draw: st.DrawFn) -> list[StepInput]:
    factors = draw(st.lists(st.tuples(factor_kinds, probabilities), max_size=8))
    steps = [StepInput(kind, value, f"step {i}") for i, (kind, value) in enumerate(factors)]
    return [StepInput(IE, draw(frequencies), "cause"), *steps]


@given(scenarios(), probabilities)
def test_a_credited_layer_never_raises_the_frequency(steps, pfd):
    before = compute_scenario(steps, 1e-4).mitigated_frequency
    after = compute_scenario([*steps, StepInput(IPL, pfd, "added")], 1e-4).mitigated_frequency
    assert after <= before


@given(scenarios(), st.floats(min_value=1e-3, max_value=1e3))
def test_the_frequency_scales_linearly_with_the_initiating_frequency(steps, k):
    assume(1e-9 <= steps[0].value * k <= 1e4)  # the scaled frequency must stay an allowed input
    scaled = [StepInput(IE, steps[0].value * k, "cause"), *steps[1:]]
    base = compute_scenario(steps, 1e-4).mitigated_frequency
    scaled_result = compute_scenario(scaled, 1e-4).mitigated_frequency
    assert scaled_result == pytest.approx(k * base, rel=1e-12, abs=0)


@given(st.data(), scenarios())
def test_step_order_does_not_change_the_result(data, steps):
    shuffled = data.draw(st.permutations(steps))
    first, second = compute_scenario(steps, 1e-4), compute_scenario(shuffled, 1e-4)
    assert second.mitigated_frequency == first.mitigated_frequency  # exact, not approximate
    assert (second.ratio, second.sil_target) == (first.ratio, first.sil_target)


@given(scenarios(), probabilities, st.integers(min_value=0, max_value=9))
def test_an_uncredited_layer_changes_nothing(steps, pfd, where):
    position = min(where, len(steps))
    uncredited = StepInput(IPL, pfd, "not credited", credited=False)
    with_it = [*steps[:position], uncredited, *steps[position:]]
    assert compute_scenario(with_it, 1e-4) == compute_scenario(steps, 1e-4)


@given(scenarios(), st.floats(min_value=1e-9, max_value=1.0))
def test_the_gap_is_the_ratio_in_orders_of_magnitude(steps, tolerable):
    result = compute_scenario(steps, tolerable)
    assert result.ratio == pytest.approx(result.mitigated_frequency / tolerable, rel=1e-15, abs=0)
    assert result.gap_orders == pytest.approx(math.log10(result.ratio), rel=1e-12, abs=1e-12)
    assert result.required_rrf == max(1.0, result.ratio)
    assert result.meets_target == (result.ratio <= 1.0 + 1e-9)
    assert result.ladder[-1].frequency_after == result.mitigated_frequency
