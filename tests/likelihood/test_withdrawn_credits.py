"""Figures with flagged credits withdrawn (issue 9, item 3): a credit the checks doubt is taken
at PFD 1, and the scenario is shown both ways. Arithmetic by hand in each test."""

import pytest
from hypothesis import given
from hypothesis import strategies as st

from app.likelihood.check_base import CheckedStep
from app.likelihood.types import IplType, Receptor, SilStatus, StepKind
from app.likelihood.withdrawn import (
    compare_credits,
    compare_receptor_credits,
    withdraw_flagged_credits,
)

IE, CM, IPL = StepKind.INITIATING_EVENT, StepKind.CONDITIONAL_MODIFIER, StepKind.IPL
CAUSE = CheckedStep(IE, 0.1, "Level loop fails", cause_system_tag="DCS-1")


def test_a_flagged_credit_changes_the_headline():
    # By hand: 0.1/yr x relief 0.01 x BPCS 0.01 = 1e-5 against 1e-5 -> ratio 1, meets target.
    # The BPCS layer at 0.01 breaks the BPCS floor (IEC 61511-1:2016, 9.3; value secondary,
    # clause from memory): withdrawn, 0.1 x 0.01 = 1e-3, ratio 100 -> RRF 100, SIL 1.
    steps = [
        CAUSE,
        CheckedStep(IPL, 0.01, "Relief valve", ipl_type=IplType.RELIEF_DEVICE),
        CheckedStep(IPL, 0.01, "Level control", ipl_type=IplType.BPCS, system_tag="DCS-2"),
    ]
    compared = compare_credits(steps, 1e-5)
    assert compared.as_credited.meets_target
    assert compared.as_credited.mitigated_frequency == pytest.approx(1e-5, rel=1e-12)
    assert compared.withdrawn.mitigated_frequency == pytest.approx(1e-3, rel=1e-12)
    assert not compared.withdrawn.meets_target
    assert compared.withdrawn.sil_target.status is SilStatus.SIL
    assert compared.withdrawn.sil_target.sil == 1
    assert compared.withdrawn_labels == ("Level control",)
    assert compared.withdrawn_indices == (2,)
    assert compared.has_warnings and compared.verdict_changes
    # The withdrawn layer stays on the ladder as a rung of 1 that reduces nothing.
    assert [p.factor for p in compared.withdrawn.ladder] == [0.1, 0.01, 1.0]


def test_a_scenario_without_warnings_is_the_same_both_ways():
    steps = [CAUSE, CheckedStep(IPL, 0.01, "Relief valve", ipl_type=IplType.RELIEF_DEVICE)]
    compared = compare_credits(steps, 1e-5)
    assert compared.warnings == () and compared.withdrawn == compared.as_credited
    assert not compared.verdict_changes


def test_receptor_lines_are_shown_both_ways():
    # By hand: 0.1 x untyped layer 0.1 (ipl_untyped withdraws it) x ignition 0.1.
    # As credited 1e-3 per receptor; withdrawn 1e-2.
    steps = [CAUSE, CheckedStep(CM, 0.1, "Ignition"), CheckedStep(IPL, 0.1, "Something")]
    compared = compare_receptor_credits(steps, {Receptor.ENVIRONMENT: 1e-4})
    assert compared.as_credited.governing.mitigated_frequency == pytest.approx(1e-3)
    assert compared.withdrawn.governing.mitigated_frequency == pytest.approx(1e-2)
    assert compared.withdrawn_indices == (2,)


pfds = st.floats(min_value=1e-4, max_value=1.0)
types = st.sampled_from([None, *IplType])


@given(st.lists(st.tuples(pfds, types), max_size=5))
def test_withdrawing_credits_never_lowers_the_frequency(layers):
    steps = [CAUSE, *(CheckedStep(IPL, p, f"L{i}", ipl_type=t) for i, (p, t) in enumerate(layers))]
    compared = compare_credits(steps, 1e-5)
    assert compared.withdrawn.mitigated_frequency >= compared.as_credited.mitigated_frequency
    assert withdraw_flagged_credits(steps, []) == steps
