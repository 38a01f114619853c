"""The proof-test calculator page: PFDavg, band, RRF, the inverse, and using the result for a step.

Reference rows: REFERENCE.md section 2, computed from the IEC 61508-6:2010 Annex B simplified
equations (B.3.2.2, equations from memory) with T1 = 8760 h (a year of 8760 h), MTTR = MRT = 8 h,
lambda_D = half the total rate lambda, beta_D = beta / 2.
"""

import json
import re
from html import unescape

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import Step
from app.likelihood.proof_test import (
    Architecture,
    SifInputs,
    longest_proof_test_interval,
    pfd_avg,
)
from app.likelihood.types import StepKind
from tests.factories import make_scenario_tree, make_step
from tests.helpers import HX

REFERENCE_1OO1 = {  # lambda = 1e-6 /h total -> lambda_D = 5e-7, DC 0 -> all undetected
    "architecture": "1oo1", "lambda_du": "5e-7", "lambda_dd": "0", "beta": "", "beta_d": "",
    "interval_value": "8760", "interval_unit": "hours", "mttr_hours": "8", "mrt_hours": "8",
    "target_pfd": "",
}


def _pfd(page: str) -> float:
    return float(re.search(r'id="pfd-avg" data-value="([^"]+)"', page)[1])


def _field_error(page: str, field: str) -> str:
    found = re.search(rf'id="pt-{field}-error">([^<]*)<', page)
    return unescape(found[1]) if found else ""


def test_the_calculator_page_opens_with_defaults(client: TestClient, session: Session) -> None:
    study_id = make_scenario_tree(session).study_id
    page = client.get(f"/studies/{study_id}/proof-test").text
    assert 'id="pt-lambda_du"' in page and "IEC 61508-6:2010 Annex B" in page
    assert _pfd(page) == pytest.approx(5e-7 * (8760 / 2 + 8))


def test_1oo1_reference_row_gives_2_19e_3_sil_2(client: TestClient, session: Session) -> None:
    """REFERENCE.md section 2: 1oo1, lambda 1e-6, DC 0 -> PFDavg 2.19e-3 (computed)."""
    study_id = make_scenario_tree(session).study_id
    response = client.post(f"/studies/{study_id}/proof-test", data=REFERENCE_1OO1, headers=HX)
    assert response.status_code == 200
    expected = pfd_avg(SifInputs(architecture=Architecture.ONE_OO_ONE, lambda_du=5e-7,
                                 lambda_dd=0.0, proof_test_interval_hours=8760.0,
                                 mttr_hours=8.0, mrt_hours=8.0))
    assert _pfd(response.text) == expected
    assert expected == pytest.approx(2.19e-3, rel=2e-3)
    assert 'id="pfd-band">SIL 2<' in response.text  # [1e-3, 1e-2): IEC 61511-1:2016, secondary
    assert 'id="pfd-rrf">456<' in response.text  # 1 / 2.194e-3 = 455.8
    assert "<html" not in response.text  # htmx gets the result fragment only


def test_1oo2_reference_row_at_dc_60_percent(client: TestClient, session: Session) -> None:
    """REFERENCE.md section 2: 1oo2, lambda 1e-6, beta 10 %, DC 60 % -> 8.88e-5 (computed)."""
    study_id = make_scenario_tree(session).study_id
    data = {**REFERENCE_1OO1, "architecture": "1oo2", "lambda_du": "2e-7", "lambda_dd": "3e-7",
            "beta": "10%", "beta_d": ""}
    page = client.post(f"/studies/{study_id}/proof-test", data=data).text
    assert _pfd(page) == pytest.approx(8.88e-5, rel=2e-3)


def test_an_interval_in_years_is_8760_hours_a_year(client: TestClient, session: Session) -> None:
    study_id = make_scenario_tree(session).study_id
    in_hours = client.post(f"/studies/{study_id}/proof-test", data=REFERENCE_1OO1).text
    in_years = client.post(f"/studies/{study_id}/proof-test", data={
        **REFERENCE_1OO1, "interval_value": "1", "interval_unit": "years"}).text
    assert _pfd(in_years) == _pfd(in_hours)


def test_the_inverse_gives_the_longest_interval_meeting_the_target(
    client: TestClient, session: Session
) -> None:
    """1oo1, DC 0: 5e-7 (T1/2 + 8) = 1e-2 -> T1 = 2 (1e-2 / 5e-7 - 8) = 39,984 h."""
    study_id = make_scenario_tree(session).study_id
    data = {**REFERENCE_1OO1, "target_pfd": "1 in 100"}
    page = client.post(f"/studies/{study_id}/proof-test", data=data).text
    inputs = SifInputs(architecture=Architecture.ONE_OO_ONE, lambda_du=5e-7, lambda_dd=0.0,
                       proof_test_interval_hours=8760.0, mttr_hours=8.0, mrt_hours=8.0)
    assert longest_proof_test_interval(inputs, 1e-2) == pytest.approx(39_984, rel=1e-8)
    assert "39,984 h (4.56 years)" in page
    assert "● met" in page


def test_a_target_no_interval_can_meet_is_said_plainly(
    client: TestClient, session: Session
) -> None:
    """With lambda_DD 1e-3 /h and MTTR 8 h the detected term alone is near 8e-3 > 1e-3."""
    study_id = make_scenario_tree(session).study_id
    data = {**REFERENCE_1OO1, "lambda_dd": "1e-3", "target_pfd": "1e-3"}
    page = unescape(client.post(f"/studies/{study_id}/proof-test", data=data).text)
    assert "None: even testing continuously leaves PFDavg above 1.0e-3" in page
    assert "▲ not met" in page


@pytest.mark.parametrize(
    ("field", "typed", "message"),
    [
        ("lambda_du", "fast", "λDU: not a number: write a rate per hour such as 5e-7"),
        ("lambda_du", "-1e-7", "λDU: a failure rate must be a finite number per hour, 0 or more"),
        ("beta", "2", "β: a probability must be greater than 0 and at most 1 (got 2)."),
        ("interval_value", "0", "Proof-test interval: the proof-test interval must be a finite"),
        ("interval_value", "", "Proof-test interval: a value is required"),
        ("interval_unit", "fortnights", "Proof-test interval: unknown unit 'fortnights'"),
        ("mttr_hours", "-8", "MTTR: a repair time must be a finite number of hours, 0 or more"),
        ("mrt_hours", "soon", "MRT: not a number of hours (got 'soon')."),
        ("target_pfd", "0", "Target PFD: a probability must be greater than 0"),
        ("architecture", "3oo4", "Architecture: unknown architecture '3oo4'"),
    ],
)
def test_bad_input_is_answered_422_at_the_field_naming_the_rule(
    client: TestClient, session: Session, field: str, typed: str, message: str
) -> None:
    study_id = make_scenario_tree(session).study_id
    response = client.post(f"/studies/{study_id}/proof-test",
                           data={**REFERENCE_1OO1, field: typed}, headers=HX)
    assert response.status_code == 422
    slot = "interval_value" if field == "interval_unit" else field
    assert _field_error(response.text, slot).startswith(message)
    assert f'id="err-{slot}" hx-swap-oob="true"' in response.text
    assert "No result: correct the fields marked above." in response.text


def test_a_redundant_function_needs_a_beta(client: TestClient, session: Session) -> None:
    study_id = make_scenario_tree(session).study_id
    response = client.post(f"/studies/{study_id}/proof-test",
                           data={**REFERENCE_1OO1, "architecture": "2oo3"})
    assert response.status_code == 422
    assert _field_error(response.text, "beta") == (
        "β: a 2oo3 function needs a common-cause fraction beta.")
    assert 'value="2oo3" selected' in response.text  # the typed input is kept


def _sif_step(session: Session) -> Step:
    """IE 0.1 /yr, a SIF step at PFD 0.1, against 1e-5 /yr: the SIF needs PFD 1e-4."""
    scenario = make_scenario_tree(session)
    return make_step(session, scenario, value=0.1, description="Overfill trip",
                     basis="Loop drawing 40-LSHH-1.")


def test_attached_to_a_step_the_target_is_the_pfd_its_scenario_needs(
    client: TestClient, session: Session
) -> None:
    step = _sif_step(session)
    page = client.get(f"/studies/{step.study_id}/proof-test",
                      params={"step_id": step.id}).text
    assert 'id="required-pfd">1.0e-4<' in page  # 1e-5 / 0.1
    assert 'name="target_pfd" value="1e-4"' in page
    assert f'name="step_id" value="{step.id}"' in page


def test_use_this_pfd_for_the_step_sets_value_inputs_and_basis(
    client: TestClient, session: Session
) -> None:
    step = _sif_step(session)
    response = client.post(f"/studies/{step.study_id}/proof-test/apply",
                           data={**REFERENCE_1OO1, "step_id": str(step.id)},
                           follow_redirects=False)
    assert response.status_code == 303
    session.refresh(step)
    expected = 5e-7 * (8760 / 2 + 8)
    assert step.value == pytest.approx(expected, rel=1e-12)
    assert step.value_text == "2.19e-3"
    stored = json.loads(step.proof_test or "{}")
    assert stored["architecture"] == "1oo1" and stored["lambda_du"] == 5e-7
    assert stored["proof_test_interval_hours"] == 8760.0 and stored["pfd_avg"] == step.value
    assert step.basis == (
        "Loop drawing 40-LSHH-1.\nIEC 61508-6 Annex B simplified equation, 1oo1, "
        "λDU=5e-7/h, λDD=0/h, T1=8760 h, MTTR=8 h, MRT=8 h: PFDavg 2.19e-3.")
    page = client.get(response.headers["location"]).text
    assert "The step now uses PFD 2.2e-3" in page
    assert 'name="lambda_du" value="5e-7"' in page  # the stored inputs come back


def test_use_for_step_with_bad_input_saves_nothing(client: TestClient, session: Session) -> None:
    step = _sif_step(session)
    response = client.post(f"/studies/{step.study_id}/proof-test/apply",
                           data={**REFERENCE_1OO1, "lambda_du": "x", "step_id": str(step.id)})
    assert response.status_code == 422
    assert 'value="x"' in response.text
    session.refresh(step)
    assert step.value == 0.1 and step.proof_test is None


def test_only_an_ipl_step_can_be_attached(client: TestClient, session: Session) -> None:
    scenario = make_scenario_tree(session)
    cause = make_step(session, scenario, kind=StepKind.ENABLING_CONDITION, value=0.5)
    response = client.get(f"/studies/{scenario.study_id}/proof-test",
                          params={"step_id": cause.id})
    assert response.status_code == 404
    assert "attaches only to an IPL" in response.text


def test_a_layer_with_demand_above_once_a_year_is_flagged_high_demand(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)  # IE 0.1 /yr; raise it to 3 /yr
    ie = session.exec(select(Step).where(Step.scenario_id == scenario.id,
                                         Step.kind == StepKind.INITIATING_EVENT)).one()
    ie.value = 3.0
    session.add(ie)
    session.commit()
    step = make_step(session, scenario, value=0.01, description="Trip")
    page = client.get(f"/studies/{scenario.study_id}/proof-test",
                      params={"step_id": step.id}).text
    assert "High demand:" in page and "3.0e0 per year" in page



# Issue 9: subsystems, the SIL by HFT, coverage and mission time, a PFD above 1.
HOURS_PER_YEAR = 8760  # a year is 8760 h


def _one_channel(lambda_du: float, t1: float = 8760.0, mrt: float = 8.0) -> float:
    """1oo1 with λDD = 0: PFDavg = λDU (T1/2 + MRT) (IEC 61508-6:2010 B.3.2.2; from memory)."""
    return lambda_du * (t1 / 2 + mrt)


def _subsystems(du_sensors: str, du_logic: str, du_final: str) -> dict[str, str]:
    return {**REFERENCE_1OO1, "lambda_du": du_final, "sensors_architecture": "1oo1",
            "sensors_lambda_du": du_sensors, "logic_architecture": "1oo1",
            "logic_lambda_du": du_logic}


def test_the_function_pfd_is_the_sum_of_its_subsystems(
    client: TestClient, session: Session
) -> None:
    """Sensors 1e-6, logic solver 1e-7, final elements 5e-7 /h, each 1oo1, T1 = 8760 h.

    By hand: 4.388e-3 + 4.388e-4 + 2.194e-3 = 7.0208e-3 -> SIL 2 by PFD ([1e-3, 1e-2),
    IEC 61511-1:2016 Table 4; values secondary); HFT 0 allows SIL 2 in low demand (IEC
    61511-1:2016, 11.4, Table 6; from memory), so SIL 2 stands.
    """
    study_id = make_scenario_tree(session).study_id
    page = unescape(client.post(f"/studies/{study_id}/proof-test",
                                data=_subsystems("1e-6", "1e-7", "5e-7")).text)
    expected = _one_channel(1e-6) + _one_channel(1e-7) + _one_channel(5e-7)
    assert expected == pytest.approx(7.0208e-3, rel=1e-12)
    assert _pfd(page) == pytest.approx(expected, rel=1e-12)
    assert 'id="function-pfd">7.0e-3<' in page
    assert 'id="sil-by-pfd">SIL 2<' in page and 'id="sil-supported-value">SIL 2<' in page
    assert "Systematic capability" in page and "verify against your copy" in page


def test_hardware_fault_tolerance_caps_the_sil(client: TestClient, session: Session) -> None:
    """Three 1oo1 subsystems at 1e-8 /h: 3 x 4.388e-5 = 1.3164e-4 -> SIL 3 by PFD, but
    SIL 3 needs HFT 1 (IEC 61511-1:2016, 11.4, Table 6; from memory): HFT 0 caps it at SIL 2."""
    study_id = make_scenario_tree(session).study_id
    page = unescape(client.post(f"/studies/{study_id}/proof-test",
                                data=_subsystems("1e-8", "1e-8", "1e-8")).text)
    assert _pfd(page) == pytest.approx(3 * _one_channel(1e-8), rel=1e-12)
    assert 'id="sil-by-pfd">SIL 3<' in page and 'id="sil-by-hft">SIL 2<' in page
    assert "SIL 2 <small>capped by HFT</small>" in page


def test_coverage_and_mission_time_add_the_untested_share(
    client: TestClient, session: Session
) -> None:
    """PTC 90 %, mission 20 years: 0.9·λDU(T1/2 + MRT) + 0.1·λDU(TM/2 + MRT) (the form of
    ISA-TR84.00.02; from memory) = 1.9746e-3 + 4.3804e-3 = 6.355e-3."""
    study_id = make_scenario_tree(session).study_id
    data = {**REFERENCE_1OO1, "proof_test_coverage": "90%", "mission_time_years": "20"}
    page = client.post(f"/studies/{study_id}/proof-test", data=data).text
    mission = 20 * HOURS_PER_YEAR
    expected = 0.9 * _one_channel(5e-7) + 0.1 * _one_channel(5e-7, t1=mission)
    assert _pfd(page) == pytest.approx(expected, rel=1e-12)


def test_a_pfd_above_1_is_shown_refused_and_never_stored(
    client: TestClient, session: Session
) -> None:
    """λDU 1e-3 /h over 10 years: λDU·T1 = 87.6, far from small (limit 0.1; common practice,
    no source); the linear form gives 1e-3 x 43,808 = 43.8, which is no probability."""
    step = _sif_step(session)
    data = {**REFERENCE_1OO1, "lambda_du": "1e-3", "interval_value": "10",
            "interval_unit": "years", "step_id": str(step.id)}
    page = unescape(client.post(f"/studies/{step.study_id}/proof-test", data=data).text)
    assert "data-simplified-warning" in page and "not small compared with 1" in page
    assert 'id="pfd-refusal"' in page and 'id="apply-pfd"' not in page
    response = client.post(f"/studies/{step.study_id}/proof-test/apply", data=data)
    assert response.status_code == 422
    assert "above 1" in unescape(response.text)
    session.refresh(step)
    assert step.value == 0.1 and step.proof_test is None
