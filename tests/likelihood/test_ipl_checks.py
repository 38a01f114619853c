"""IPL checks: each fires on a case built to trigger it and stays quiet on one built not to."""

import pytest

from app.likelihood.checks import CheckedStep, CheckWarning, IplType, check_scenario
from app.likelihood.types import StepInput, StepKind
from app.likelihood.typical import typical_by_key

IE, CM, IPL = StepKind.INITIATING_EVENT, StepKind.CONDITIONAL_MODIFIER, StepKind.IPL
BPCS_SOURCE = "IEC 61511-1:2016, clause 9.3"  # value secondary; clause from memory
INDEPENDENCE_SOURCE = "CCPS, Layer of Protection Analysis (2001), ch. 6"  # secondary
OPERATOR_SOURCE = "CCPS, Layer of Protection Analysis (2001), ch. 6"  # from memory
SIL_BAND_SOURCE = "IEC 61511-1:2016, Table 4, low demand"  # values secondary; table from memory
CCPS_TABLE_5_1 = "CCPS, Layer of Protection Analysis (2001), Table 5.1"  # seen in a scan
IGNITION = "Cox, Lees & Ang, Classification of Hazardous Locations (IChemE, 1990)"  # from memory

CAUSE = CheckedStep(IE, 0.1, "Level loop fails", cause_system_tag="DCS-1")


def bpcs(label: str, pfd: float = 0.1, tag: str = "DCS-2", credited: bool = True) -> CheckedStep:
    return CheckedStep(IPL, pfd, label, credited, IplType.BPCS, system_tag=tag)


def operator(pfd: float = 0.1, minutes: float | None = 20.0) -> CheckedStep:
    return CheckedStep(IPL, pfd, "Operator stops feed", ipl_type=IplType.OPERATOR_RESPONSE,
                       response_time_minutes=minutes)


def sif(sil: int, pfd: float) -> CheckedStep:
    return CheckedStep(IPL, pfd, "High level trip", ipl_type=IplType.SIF, system_tag="SIS-1",
                       sil_claimed=sil)


def rules_of(steps: list[CheckedStep]) -> list[tuple[str, str]]:
    return [(warning.rule, warning.step_label) for warning in check_scenario(steps)]


# (case, steps, expected (rule, step) pairs, source of the rule)
FIRES = [
    ("bpcs-pfd-0.01", [CAUSE, bpcs("Level control", 0.01)],
     [("bpcs_pfd_floor", "Level control")], BPCS_SOURCE),
    ("cause-is-layer", [CAUSE, bpcs("Level alarm", tag="dcs-1 ")],
     [("cause_is_layer", "Level alarm")], INDEPENDENCE_SOURCE),
    ("two-bpcs-one-tag", [CAUSE, bpcs("Alarm A"), bpcs("Alarm B", tag=" dcs-2")],
     [("shared_bpcs", "Alarm B")], BPCS_SOURCE),
    ("two-bpcs-untagged", [CAUSE, bpcs("Alarm A", tag=""), bpcs("Alarm B", tag="")],
     [("shared_bpcs", "Alarm B")], BPCS_SOURCE),
    ("operator-5-min", [CAUSE, operator(minutes=5)],
     [("operator_time", "Operator stops feed")], OPERATOR_SOURCE),
    ("operator-time-missing", [CAUSE, operator(minutes=None)],
     [("operator_time", "Operator stops feed")], OPERATOR_SOURCE),
    ("operator-pfd-0.01", [CAUSE, operator(pfd=0.01)],
     [("operator_pfd_floor", "Operator stops feed")], OPERATOR_SOURCE),
    ("sil1-claims-pfd-0.001", [CAUSE, sif(1, 0.001)],
     [("sil_claim_mismatch", "High level trip")], SIL_BAND_SOURCE),
    ("sil5", [CAUSE, sif(5, 1e-4)], [("sil_claim_mismatch", "High level trip")], SIL_BAND_SOURCE),
    ("ie-outside-table",
     [CheckedStep(IE, 1.0, "Seal leaks", typical_key="pump_seal_failure")],
     [("outside_typical_range", "Seal leaks")], CCPS_TABLE_5_1),
    ("ignition-not-table-value",
     [CAUSE, CheckedStep(CM, 0.05, "Ignition", typical_key="ignition_gas_small")],
     [("outside_typical_range", "Ignition")], IGNITION),
]

QUIET = [
    ("bpcs-pfd-0.1", [CAUSE, bpcs("Level control", 0.1)], BPCS_SOURCE),
    ("bpcs-pfd-a-hair-under-0.1", [CAUSE, bpcs("Level control", 0.1 * (1 - 1e-12))], BPCS_SOURCE),
    ("layer-on-other-system", [CAUSE, bpcs("Level alarm", tag="DCS-2")], INDEPENDENCE_SOURCE),
    ("cause-untagged", [CheckedStep(IE, 0.1, "Cause"), bpcs("Alarm", tag="")],
     INDEPENDENCE_SOURCE),
    ("two-bpcs-two-tags", [CAUSE, bpcs("Alarm A"), bpcs("Alarm B", tag="DCS-3")], BPCS_SOURCE),
    ("second-bpcs-uncredited", [CAUSE, bpcs("Alarm A"), bpcs("Alarm B", credited=False)],
     BPCS_SOURCE),
    ("operator-10-min", [CAUSE, operator(minutes=10)], OPERATOR_SOURCE),
    ("sil1-at-0.01", [CAUSE, sif(1, 0.01)], SIL_BAND_SOURCE),
    ("sil2-at-0.005", [CAUSE, sif(2, 0.005)], SIL_BAND_SOURCE),
    ("sil1-at-0.05-conservative", [CAUSE, sif(1, 0.05)], SIL_BAND_SOURCE),
    ("ie-inside-table", [CheckedStep(IE, 0.05, "Seal", typical_key="pump_seal_failure")],
     CCPS_TABLE_5_1),
    ("ie-on-table-edge", [CheckedStep(IE, 0.1, "Seal", typical_key="pump_seal_failure")],
     CCPS_TABLE_5_1),
    ("unknown-typical-key", [CheckedStep(IE, 9.0, "Cause", typical_key="no_such_row")],
     "unknown keys are skipped"),
]


@pytest.mark.parametrize(("steps", "expected", "source"),
                         [pytest.param(*case[1:], id=case[0]) for case in FIRES])
def test_each_check_fires_on_a_case_built_to_trigger_it(steps, expected, source):
    warnings = check_scenario(steps)
    assert [(w.rule, w.step_label) for w in warnings] == expected
    assert [w.source for w in warnings] == [source]


@pytest.mark.parametrize(
    ("steps", "source"), [pytest.param(*case[1:], id=case[0]) for case in QUIET]
)
def test_each_check_stays_quiet_on_a_case_built_not_to_trigger_it(steps, source):
    assert check_scenario(steps) == [], source


def test_uncredited_layers_are_not_checked_for_independence_or_claims():
    uncredited = [
        bpcs("Level control", 0.01, tag="DCS-1", credited=False),
        CheckedStep(IPL, 0.01, "Operator", credited=False, ipl_type=IplType.OPERATOR_RESPONSE),
        CheckedStep(IPL, 1e-4, "Trip", credited=False, ipl_type=IplType.SIF, sil_claimed=1),
    ]
    assert check_scenario([CAUSE, *uncredited]) == []


def test_an_uncredited_layer_is_still_checked_against_its_typical_range():
    step = CheckedStep(IPL, 0.5, "Dike", credited=False, typical_key="dike")
    assert rules_of([CAUSE, step]) == [("outside_typical_range", "Dike")]


def test_warnings_say_what_is_wrong_and_cite_the_source():
    steps = [CAUSE, bpcs("Level control", 0.01)]
    [warning] = check_scenario(steps)
    assert warning == CheckWarning(
        "bpcs_pfd_floor",
        "Level control",
        "Independent protection layer 'Level control': a BPCS layer is credited with PFD 0.01, "
        "a risk reduction over 10; that needs a BPCS designed and managed to IEC 61511. "
        "Take 0.1 or use a SIF.",
        BPCS_SOURCE,
        citation="IEC 61511-1:2016, clause 9.3",
        verify_against_copy=True,
        step_index=1,
        withdraws_credit=True,
    )
    assert warning.step is steps[1]


def test_one_layer_can_break_several_rules_at_once():
    steps = [CAUSE, bpcs("Alarm A", tag="DCS-1"), bpcs("Alarm B", 0.01, tag="DCS-1")]
    assert rules_of(steps) == [
        ("bpcs_pfd_floor", "Alarm B"),
        ("cause_is_layer", "Alarm A"),
        ("cause_is_layer", "Alarm B"),
        ("shared_bpcs", "Alarm B"),
    ]


def test_the_outside_range_message_quotes_the_published_range():
    [warning] = check_scenario([CheckedStep(IE, 1.0, "Seal", typical_key="pump_seal_failure")])
    row = typical_by_key("pump_seal_failure")
    assert row is not None and warning.source == row.source
    assert "outside the typical value for 'Pump seal failure' (0.01 to 0.1)" in warning.message


def test_a_checked_step_gives_the_arithmetic_its_plain_step():
    step = bpcs("Level control", 0.1, credited=False)
    assert step.to_step_input() == StepInput(IPL, 0.1, "Level control", credited=False)
