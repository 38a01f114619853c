"""The IPL checks added for issue 9, item 5: each fires on a case built to trigger it and stays
quiet on one built not to. Each case names its source: a document (with "verify against your
copy" where REFERENCE.md marks the value secondary or from memory) or "common practice, no
source". A year is 8760 h here.
"""

import pytest

from app.likelihood.check_base import CauseType, CheckedStep
from app.likelihood.checks import check_scenario
from app.likelihood.checks_independence import loop_number
from app.likelihood.conversions import task_error_frequency
from app.likelihood.sources import VERIFY_MARKER, Citation
from app.likelihood.types import IplType, StepKind
from app.likelihood.units import HOURS_PER_WEEK, HOURS_PER_YEAR

IE, IPL = StepKind.INITIATING_EVENT, StepKind.IPL
BPCS, SIF, OP = IplType.BPCS, IplType.SIF, IplType.OPERATOR_RESPONSE
CAUSE = CheckedStep(IE, 0.1, "Level loop fails", cause_system_tag="LIC-101",
                    cause_type=CauseType.BPCS_FAILURE, final_element_tag="LV-101")
RELIEF = CheckedStep(IPL, 0.01, "Relief valve", ipl_type=IplType.RELIEF_DEVICE)

IEC_2003_BPCS = "IEC 61511-1:2003, clause 8.2.2"  # secondary: verify against your copy
IEC_2016_BPCS = "IEC 61511-1:2016, clause 9.3"  # value secondary, clause from memory
IEC_TABLE_4 = "IEC 61511-1:2016, Table 4 (low demand SIL bands)"  # secondary
CCPS_CH6 = "CCPS, Layer of Protection Analysis (AIChE, 2001), chapter 6"  # from memory
HSE_PSLG = ("HSE/PSLG, Safety and environmental standards for fuel storage sites, final report "
            "(2009), Appendix 2")  # seen
NO_SOURCE = "Common practice, no published source"


def layer(label: str, ipl_type: IplType | None, pfd: float = 0.1, **more) -> CheckedStep:
    return CheckedStep(IPL, pfd, label, ipl_type=ipl_type, **more)


def operator(**more) -> CheckedStep:
    return layer("Operator closes inlet", OP, 0.1, response_time_minutes=20.0, **more)


def sif(pfd: float = 0.01, sil: int | None = 2, **more) -> CheckedStep:
    more.setdefault("system_tag", "LSHH-205")
    return layer("High level trip", SIF, pfd, sil_claimed=sil, **more)


def human_cause(**more) -> CheckedStep:
    return CheckedStep(IE, 0.52, "Wrong tank lined up", cause_type=CauseType.HUMAN_ERROR, **more)


# (case id, steps, expected (rule, step label), citation, verify flag)
FIRES = [
    ("bpcs-cause-0.01-per-year",
     [CheckedStep(IE, 0.01, "Flow loop fails", cause_type=CauseType.BPCS_FAILURE), RELIEF],
     ("bpcs_cause_floor", "Flow loop fails"), IEC_2003_BPCS, True),
    ("bpcs-cause-by-typical-key",
     [CheckedStep(IE, 0.05, "Loop fails", typical_key="bpcs_loop_failure"), RELIEF],
     ("bpcs_cause_floor", "Loop fails"), IEC_2003_BPCS, True),
    ("operator-on-bpcs-alarm",
     [CAUSE, layer("Level control", BPCS, system_tag="DCS-2"), operator(alarm_on_bpcs=True)],
     ("operator_on_bpcs", "Operator closes inlet"), IEC_2016_BPCS, True),
    ("operator-alarm-same-system-tag",
     [CAUSE, layer("Level control", BPCS, system_tag="DCS-2"), operator(system_tag="dcs-2")],
     ("operator_on_bpcs", "Operator closes inlet"), IEC_2016_BPCS, True),
    ("loop-shared-with-cause",
     [CAUSE, layer("High level alarm", BPCS, system_tag="LAH-101")],
     ("shared_loop_number", "High level alarm"), NO_SOURCE, False),
    ("loop-shared-by-two-layers",
     [CAUSE, layer("Trip A", BPCS, system_tag="PSH-0340"), sif(system_tag="PSHH-340", sil=1)],
     ("shared_loop_number", "High level trip"), NO_SOURCE, False),
    ("final-element-shared-with-cause",
     [CAUSE, sif(final_element_tag=" lv-101")],
     ("shared_final_element", "High level trip"), CCPS_CH6, True),
    ("final-element-shared-by-sif-and-bpcs",
     [CheckedStep(IE, 0.1, "Pump seal"),
      layer("Level control", BPCS, final_element_tag="XV-7"), sif(final_element_tag="XV-7")],
     ("shared_final_element", "High level trip"), CCPS_CH6, True),
    ("sif-no-sil", [CAUSE, sif(sil=None)], ("sif_no_sil", "High level trip"), IEC_TABLE_4, True),
    ("sif-beyond-sil3", [CAUSE, sif(pfd=5e-5, sil=4)],
     ("sif_beyond_sil3", "High level trip"), NO_SOURCE, False),
    ("untyped-ipl", [CAUSE, layer("Something", None, 0.1)],
     ("ipl_untyped", "Something"), NO_SOURCE, False),
    ("ipl-at-pfd-1", [CAUSE, layer("Bund", IplType.PASSIVE, 1.0)],
     ("ipl_pfd_one", "Bund"), NO_SOURCE, False),
    ("two-human-layers-no-crew",
     [CheckedStep(IE, 0.1, "Pump seal"), operator(),
      layer("Field operator isolates", OP, response_time_minutes=30.0)],
     ("same_crew", "Field operator isolates"), NO_SOURCE, False),
    ("human-cause-and-layer-same-crew",
     [human_cause(crew="Shift A", opportunities_per_year=52, per_opportunity_probability=0.01),
      operator(crew="shift a")],
     ("same_crew", "Operator closes inlet"), NO_SOURCE, False),
    ("per-opportunity-without-count",
     [CheckedStep(IE, 0.01, "Operator error", typical_key="operator_routine_error"), RELIEF],
     ("per_opportunity_count", "Operator error"), HSE_PSLG, False),
    ("per-opportunity-product-differs",
     [CheckedStep(IE, 0.01, "Operator error", per_opportunity_probability=0.01,
                  opportunities_per_year=52), RELIEF],
     ("per_opportunity_product", "Operator error"), HSE_PSLG, False),
    ("time-available-under-10-min",
     [CheckedStep(IE, 0.1, "Pump seal"), operator(time_available_minutes=8.0,
                                                  time_to_detect_and_act_minutes=3.0)],
     ("operator_time", "Operator closes inlet"), CCPS_CH6, True),
    ("time-needed-not-given",
     [CheckedStep(IE, 0.1, "Pump seal"), operator(time_available_minutes=30.0)],
     ("operator_time_needed", "Operator closes inlet"), CCPS_CH6, True),
    ("time-needed-exceeds-available",
     [CheckedStep(IE, 0.1, "Pump seal"), operator(time_available_minutes=15.0,
                                                  time_to_detect_and_act_minutes=20.0)],
     ("operator_time_margin", "Operator closes inlet"), CCPS_CH6, True),
]

QUIET = [
    ("bpcs-cause-0.1-per-year", [CAUSE, RELIEF], IEC_2003_BPCS),
    ("bpcs-cause-at-1e-5-per-hour", [CheckedStep(IE, 1e-5 * 8760, "Loop fails",
                                                 cause_type=CauseType.BPCS_FAILURE), RELIEF],
     IEC_2003_BPCS),
    ("non-bpcs-cause-rare", [CheckedStep(IE, 1e-4, "Tank fails"), RELIEF], IEC_2003_BPCS),
    ("operator-alarm-off-bpcs",
     [CAUSE, layer("Level control", BPCS, system_tag="DCS-2"), operator(alarm_on_bpcs=False)],
     IEC_2016_BPCS),
    ("operator-alarm-unknown-other-tag",
     [CAUSE, layer("Level control", BPCS, system_tag="DCS-2"), operator(system_tag="ALM-9")],
     IEC_2016_BPCS),
    ("different-loops", [CAUSE, layer("High level alarm", BPCS, system_tag="LAH-102")],
     NO_SOURCE),
    ("system-names-are-not-loops",
     [CheckedStep(IE, 0.1, "Cause", cause_system_tag="DCS-1"),
      layer("Alarm", BPCS, system_tag="SIS-1"), RELIEF], NO_SOURCE),
    ("different-final-elements", [CAUSE, sif(final_element_tag="XV-205")], CCPS_CH6),
    ("sif-sil2-at-0.01", [CAUSE, sif()], IEC_TABLE_4),
    ("sif-at-1e-4", [CAUSE, sif(pfd=1e-4, sil=3)], NO_SOURCE),
    ("typed-ipl", [CAUSE, RELIEF], NO_SOURCE),
    ("pfd-1-uncredited", [CAUSE, layer("Bund", IplType.PASSIVE, 1.0, credited=False)], NO_SOURCE),
    ("two-human-layers-two-crews",
     [CheckedStep(IE, 0.1, "Pump seal"), operator(crew="Control room"),
      layer("Field operator isolates", OP, response_time_minutes=30.0, crew="Field")],
     NO_SOURCE),
    ("human-cause-other-crew",
     [human_cause(crew="Contractor", opportunities_per_year=52, per_opportunity_probability=0.01),
      operator(crew="Shift A")], NO_SOURCE),
    ("per-opportunity-product-matches",
     [CheckedStep(IE, 0.52, "Operator error", per_opportunity_probability=0.01,
                  opportunities_per_year=52), RELIEF], HSE_PSLG),
    ("time-with-margin",
     [CheckedStep(IE, 0.1, "Pump seal"), operator(time_available_minutes=30.0,
                                                  time_to_detect_and_act_minutes=10.0)],
     CCPS_CH6),
]


@pytest.mark.parametrize(("steps", "expected", "citation", "verify"),
                         [pytest.param(*case[1:], id=case[0]) for case in FIRES])
def test_each_new_rule_fires_on_a_case_built_to_trigger_it(steps, expected, citation, verify):
    warnings = check_scenario(steps)
    assert [(w.rule, w.step_label) for w in warnings] == [expected]
    [warning] = warnings
    assert (warning.citation, warning.verify_against_copy) == (citation, verify)
    assert "from memory" not in warning.citation and "secondary" not in warning.citation
    assert warning.step_index is not None and steps[warning.step_index].label == expected[1]


@pytest.mark.parametrize(("steps", "citation"),
                         [pytest.param(*case[1:], id=case[0]) for case in QUIET])
def test_each_new_rule_stays_quiet_on_a_case_built_not_to_trigger_it(steps, citation):
    assert check_scenario(steps) == [], citation


def test_the_bpcs_cause_floor_is_1e_5_per_hour_in_years():
    # IEC 61511-1:2003, 8.2.2 (secondary): 1e-5/h x 8760 h = 0.0876 per year.
    warning = check_scenario([CheckedStep(IE, 0.05, "Loop", cause_type=CauseType.BPCS_FAILURE),
                              RELIEF])[0]
    assert "0.0876 per year" in warning.message


def test_a_weekly_task_at_one_percent_is_0_52_a_year():
    # HSE/PSLG (2009) App. 2 (seen): weekly task, 0.01 per task -> 0.52 per year. A year of
    # 8760 h holds 8760 / 168 = 52.14 weeks, the same week the parser uses.
    weeks = HOURS_PER_YEAR / HOURS_PER_WEEK
    assert task_error_frequency(weeks, 0.01) == pytest.approx(0.52, abs=0.005)


def test_the_loop_number_is_the_last_run_of_three_or_more_digits():
    # Common practice, no source (instrument tags name their loop by number).
    assert [loop_number(t) for t in ("LIC-101", "LV-101A", "10-PT-0340", "DCS-1", "")] == [
        "101", "101", "340", "", ""]


def test_a_citation_shows_the_verify_marker_apart_from_the_text():
    cited = Citation("IEC 61511-1:2016, clause 9.3", verify_against_copy=True)
    assert cited.display() == f"IEC 61511-1:2016, clause 9.3 [{VERIFY_MARKER}]"
    assert Citation("HSE/PSLG (2009), Appendix 2").display() == "HSE/PSLG (2009), Appendix 2"


def test_warnings_on_a_cause_never_withdraw_a_credit_and_on_a_layer_do():
    steps = [CheckedStep(IE, 0.01, "Loop", cause_type=CauseType.BPCS_FAILURE),
             layer("Untyped", None)]
    by_rule = {w.rule: w for w in check_scenario(steps)}
    assert not by_rule["bpcs_cause_floor"].withdraws_credit
    assert by_rule["ipl_untyped"].withdraws_credit
