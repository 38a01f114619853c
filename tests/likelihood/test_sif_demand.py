"""Demand on an added SIF (issue 9, item 1) and per-receptor figures (item 2).

Sources: mode definitions IEC 61511-1:2016, 3.2.39.x (from memory; REFERENCE.md section 1);
SIL bands IEC 61511-1:2016 Tables 4 and 5 (values secondary, table numbers from memory);
conditional modifiers act after the release (CCPS 2001 concept; from memory). A year is 8760 h.
"""

import pytest
from hypothesis import given
from hypothesis import strategies as st

from app.likelihood.demand import sif_demand
from app.likelihood.frequency import compute_scenario
from app.likelihood.receptors import assess_receptors
from app.likelihood.types import (
    DemandMode,
    LikelihoodInputError,
    ModifierKind,
    Receptor,
    SilStatus,
    StepInput,
    StepKind,
    modifier_receptors,
)

IE, EC, CM, IPL = (StepKind.INITIATING_EVENT, StepKind.ENABLING_CONDITION,
                   StepKind.CONDITIONAL_MODIFIER, StepKind.IPL)
PEOPLE, ENV, ASSET = Receptor.PEOPLE, Receptor.ENVIRONMENT, Receptor.ASSET


def test_the_issue_case_is_high_demand_and_needs_a_pfh_in_the_sil_2_band():
    # By hand: demand = 5/yr (no enabling condition, no layer) > 1/yr -> high demand.
    # PFH = 1e-5 / (8760 x 0.01) = 1e-5 / 87.6 = 1.1416e-7 per hour, in [1e-7, 1e-6) -> SIL 2.
    steps = [StepInput(IE, 5.0, "Feed valve fails open"), StepInput(CM, 0.01, "Ignition")]
    result = compute_scenario(steps, 1e-5)
    assert result.demand is not None
    assert result.demand.demand_rate_per_year == 5.0
    assert result.demand.demand_mode is DemandMode.HIGH
    assert result.sil_target.required_pfh == pytest.approx(1.1415525e-7, rel=1e-6)
    assert result.sil_target.required_pfh == pytest.approx(1e-5 / (8760 * 0.01), rel=1e-12)
    assert (result.sil_target.status, result.sil_target.sil) == (SilStatus.SIL, 2)
    assert result.demand.formula == (
        "High demand (5.0e0/yr > 1/yr): PFH = 1.0e-5 ÷ (8760 h x 1.0e-2) = 1.1e-7/h"
    )


def test_the_old_reading_from_the_mitigated_frequency_would_have_said_low_demand():
    # The mitigated frequency 5 x 0.01 = 0.05/yr is below once a year; the demand is not.
    steps = [StepInput(IE, 5.0, "cause"), StepInput(CM, 0.01, "Ignition")]
    assert compute_scenario(steps, 1e-5).mitigated_frequency == pytest.approx(0.05)
    assert compute_scenario(steps, 1e-5).sil_target.demand_mode is DemandMode.HIGH


def test_a_layer_acting_before_the_sif_lowers_the_demand_and_one_after_does_not():
    # By hand: 5/yr x enabling 0.5 x BPCS 0.1 = 0.25/yr <= 1 -> low demand; the bund (0.01)
    # acts after the trip. Mitigated = 0.25 x 0.01 = 2.5e-3; RRF = 2.5e-3 / 1e-5 = 250 -> SIL 2.
    steps = [
        StepInput(IE, 5.0, "cause"),
        StepInput(EC, 0.5, "Filling"),
        StepInput(IPL, 0.1, "Level control"),
        StepInput(IPL, 0.01, "Bund", acts_after_sif=True),
    ]
    demand = sif_demand(steps, 1e-5)
    assert demand.demand_rate_per_year == pytest.approx(0.25, rel=1e-15)
    assert demand.demand_mode is DemandMode.LOW
    assert demand.required_rrf == pytest.approx(250.0, rel=1e-12)
    assert demand.sil_target.sil == 2
    assert demand.formula == "Low demand (2.5e-1/yr ≤ 1/yr): RRF = 2.5e-3 ÷ 1.0e-5 = 2.5e2"


def test_in_high_demand_a_layer_acting_after_the_sif_relaxes_the_pfh():
    # By hand: demand 5/yr; bund 0.01 acts after; PFH = 1e-5 / (8760 x 0.01) -> SIL 2,
    # the same number as a modifier of 0.01: both act after a failure of the function.
    steps = [StepInput(IE, 5.0, "cause"), StepInput(IPL, 0.01, "Bund", acts_after_sif=True)]
    demand = sif_demand(steps, 1e-5)
    assert demand.demand_mode is DemandMode.HIGH
    assert demand.required_pfh == pytest.approx(1e-5 / 87.6, rel=1e-12)


def test_an_uncredited_layer_counts_neither_before_nor_after():
    steps = [StepInput(IE, 5.0, "cause"), StepInput(IPL, 0.1, "Trip", credited=False)]
    assert sif_demand(steps, 1e-5).demand_rate_per_year == 5.0


def test_exactly_once_a_year_is_low_demand():
    # IEC 61511-1:2016 (from memory): low demand means at most once a year.
    assert sif_demand([StepInput(IE, 1.0, "cause")], 1e-5).demand_mode is DemandMode.LOW


def test_modifier_defaults_presence_and_vulnerability_people_only_ignition_all():
    # Issue 9, item 2 (CCPS 2013 concept; from memory).
    def receptors(kind: ModifierKind | None) -> frozenset[Receptor]:
        return modifier_receptors(StepInput(CM, 0.5, "m", modifier_kind=kind))

    assert receptors(ModifierKind.PRESENCE) == {PEOPLE}
    assert receptors(ModifierKind.VULNERABILITY) == {PEOPLE}
    assert receptors(ModifierKind.IGNITION) == {PEOPLE, ENV, ASSET}
    assert receptors(None) == {PEOPLE, ENV, ASSET}
    given_set = StepInput(CM, 0.5, "m", modifier_kind=ModifierKind.IGNITION,
                          receptors=frozenset({ASSET}))
    assert modifier_receptors(given_set) == {ASSET}


POOL_FIRE = [
    StepInput(IE, 0.1, "Hose fails"),
    StepInput(CM, 0.1, "Ignition", modifier_kind=ModifierKind.IGNITION),
    StepInput(CM, 0.1, "Operator present", modifier_kind=ModifierKind.PRESENCE),
    StepInput(CM, 0.5, "Fatality", modifier_kind=ModifierKind.VULNERABILITY),
    StepInput(IPL, 0.01, "Relief valve"),
]


def test_the_environment_line_governs_when_people_modifiers_do_not_reach_it():
    # By hand: people 0.1 x 0.1 x 0.1 x 0.5 x 0.01 = 5e-6 against 1e-5 -> ratio 0.5, met.
    # Environment 0.1 x 0.1 (ignition only) x 0.01 = 1e-4 against 1e-5 -> ratio 10, RRF 10.
    # Asset 1e-4 against 1e-3 -> ratio 0.1. Environment governs. The old whole-scenario
    # figure (every modifier on every receptor) would have said 5e-6: met on all three.
    assessed = assess_receptors(POOL_FIRE, {PEOPLE: 1e-5, ENV: 1e-5, ASSET: 1e-3})
    by = {line.receptor: line for line in assessed.lines}
    assert by[PEOPLE].mitigated_frequency == pytest.approx(5e-6, rel=1e-12)
    assert by[ENV].mitigated_frequency == pytest.approx(1e-4, rel=1e-12)
    assert by[ASSET].ratio == pytest.approx(0.1, rel=1e-12)
    assert by[PEOPLE].meets_target and not by[ENV].meets_target
    assert assessed.governing.receptor is ENV
    assert assessed.governing.required_rrf == pytest.approx(10.0, rel=1e-12)
    assert assessed.governing.demand.sil_target.status is SilStatus.BELOW_SIL1
    assert compute_scenario(POOL_FIRE, 1e-5).mitigated_frequency == pytest.approx(5e-6)


def test_people_may_be_not_rated():
    assessed = assess_receptors(POOL_FIRE, {PEOPLE: None, ASSET: 1e-3})
    assert [line.receptor for line in assessed.lines] == [ASSET]
    assert assessed.not_rated == (PEOPLE, ENV)


def test_a_scenario_with_no_rated_receptor_is_refused_naming_the_rule():
    with pytest.raises(LikelihoodInputError) as raised:
        assess_receptors(POOL_FIRE, {PEOPLE: None})
    assert raised.value.rule == "receptor_rated"


def test_a_receptor_tolerable_frequency_is_bounded_like_any_frequency():
    with pytest.raises(LikelihoodInputError) as raised:
        assess_receptors(POOL_FIRE, {PEOPLE: 1e-5, ENV: 1e-300})
    assert raised.value.rule == "frequency_range"


probabilities = st.floats(min_value=1e-6, max_value=1.0)
kinds = st.sampled_from([None, *ModifierKind])


@st.composite
def receptor_scenarios(draw: st.DrawFn) -> list[StepInput]:
    modifiers = draw(st.lists(st.tuples(probabilities, kinds), max_size=5))
    layers = draw(st.lists(st.tuples(probabilities, st.booleans()), max_size=4))
    return [
        StepInput(IE, draw(st.floats(min_value=1e-4, max_value=100.0)), "cause"),
        *(StepInput(CM, p, f"m{i}", modifier_kind=k) for i, (p, k) in enumerate(modifiers)),
        *(StepInput(IPL, p, f"l{i}", acts_after_sif=a) for i, (p, a) in enumerate(layers)),
    ]


@given(receptor_scenarios())
def test_a_receptor_frequency_is_never_below_the_all_modifier_one(steps):
    everyone = compute_scenario(steps, 1e-5).mitigated_frequency
    assessed = assess_receptors(steps, {PEOPLE: 1e-5, ENV: 1e-5, ASSET: 1e-5})
    for line in assessed.lines:
        assert line.mitigated_frequency >= everyone
    assert assessed.governing.ratio == max(line.ratio for line in assessed.lines)


@given(receptor_scenarios())
def test_demand_times_what_acts_after_is_the_mitigated_frequency(steps):
    demand = sif_demand(steps, 1e-5)
    product = demand.demand_rate_per_year * demand.modifier_product * demand.after_layers_product
    assert demand.mitigated_frequency == pytest.approx(product, rel=1e-12)
    assert demand.mitigated_frequency <= demand.demand_rate_per_year


@given(receptor_scenarios(), probabilities)
def test_a_modifier_never_changes_the_demand_on_the_added_function(steps, p):
    # Conditional modifiers act after the release (CCPS 2001 concept; from memory).
    with_modifier = [*steps, StepInput(CM, p, "added modifier")]
    assert (sif_demand(with_modifier, 1e-5).demand_rate_per_year
            == sif_demand(steps, 1e-5).demand_rate_per_year)


def test_the_formula_says_when_no_function_is_needed():
    # By hand: 5/yr x relief 0.01 (after) x ignition 0.01 = 5e-4 against 1e-3: met.
    steps = [StepInput(IE, 5.0, "cause"), StepInput(CM, 0.01, "Ignition"),
             StepInput(IPL, 0.01, "Relief valve", acts_after_sif=True)]
    demand = sif_demand(steps, 1e-3)
    assert demand.sil_target.status is SilStatus.NONE_NEEDED
    assert demand.formula == (
        "High demand (5.0e0/yr > 1/yr): mitigated 5.0e-4 ≤ tolerable 1.0e-3, "
        "no added function needed")
