"""The step details form: what an IPL or a cause carries beyond its number."""

import re
from html import unescape

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import Step
from app.likelihood.types import StepKind
from tests.factories import make_scenario_tree, make_step
from tests.helpers import HX

VALID = {"ipl_type": "operator_response", "system_tag": "Control room panel",
         "time_available_minutes": "15", "time_to_detect_and_act_minutes": "5",
         "sil_claimed": "", "typical_key": "operator_response",
         "basis": "Alarm LAH-4010 with 20 min to overflow (invented)."}


def _ipl(session: Session) -> Step:
    return make_step(session, make_scenario_tree(session), value=0.1, description="Level alarm")


def _url(step: Step) -> str:
    return f"/studies/{step.study_id}/steps/{step.id}/details"


def _error(page: str, field: str) -> str:
    found = re.search(rf'id="{field}-error" role="alert">([^<]*)<', page)
    return unescape(found[1]) if found else ""


def test_an_ipl_shows_every_detail_field(client: TestClient, session: Session) -> None:
    page = client.get(_url(_ipl(session))).text
    for field in ("ipl_type", "system_tag", "time_available_minutes",
                  "time_to_detect_and_act_minutes", "acts_after_sif", "final_element_tag",
                  "alarm_on_bpcs", "crew", "sil_claimed",
                  "typical_key", "basis"):
        assert f'name="{field}"' in page
    assert "Relief valve: 1.0e-5 to 1.0e-1, example value 1.0e-2" in page  # typical rows for IPLs
    assert "Pump seal failure" not in page  # initiating-event rows are not offered


def test_an_initiating_event_offers_its_system_and_typical_value(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    cause = session.exec(select(Step).where(Step.scenario_id == scenario.id)).one()
    page = client.get(_url(cause)).text
    assert "System or device whose failure is the cause" in page
    assert 'name="ipl_type"' not in page and 'name="sil_claimed"' not in page
    assert "Pump seal failure: 1.0e-2 to 1.0e-1, example value 1.0e-1" in page


def test_valid_details_are_saved(client: TestClient, session: Session) -> None:
    step = _ipl(session)
    response = client.post(_url(step), data=VALID)
    assert response.status_code == 200 and "✓ Saved." in response.text
    session.refresh(step)
    assert (step.ipl_type, step.system_tag, step.time_available_minutes,
            step.time_to_detect_and_act_minutes, step.sil_claimed, step.typical_key) == (
        "operator_response", "Control room panel", 15.0, 5.0, None, "operator_response")
    assert step.basis == VALID["basis"]
    shown = unescape(response.text)
    # The chosen typical row's source: document, edition, chapter; the status apart.
    assert "Source: CCPS, Layer of Protection Analysis (AIChE, 2001), chapter 6." in shown
    assert 'data-verify>verify against your copy<' in shown and "(from memory)" not in shown


def test_htmx_gets_the_form_fragment_only(client: TestClient, session: Session) -> None:
    step = _ipl(session)
    response = client.post(_url(step), data=VALID, headers=HX)
    assert response.status_code == 200
    assert response.text.lstrip().startswith('<section class="panel step-details"')
    assert "<html" not in response.text


@pytest.mark.parametrize(
    ("field", "typed", "message"),
    [
        ("time_available_minutes", "soon",
         "Time available: not a number of minutes (got 'soon')."),
        ("time_to_detect_and_act_minutes", "-5",
         "Time to detect and act: minutes must be 0 or more (got -5)."),
        ("sil_claimed", "5", "SIL claimed: a SIL runs from 1 to 4 (got '5')."),
        ("ipl_type", "wishful", "Layer type: unknown type 'wishful'"),
        ("typical_key", "unicorn", "Typical value: no typical-value row 'unicorn'."),
        ("typical_key", "pump_seal_failure",
         "Typical value: 'Pump seal failure' is a typical value for initiating event"),
        ("system_tag", "T" * 81, "System or device: at most 80 characters (got 81)."),
        ("basis", "b" * 2001, "Basis: at most 2000 characters (got 2001)."),
    ],
)
def test_a_bad_detail_is_422_at_the_field_keeping_the_typed_text(
    client: TestClient, session: Session, field: str, typed: str, message: str
) -> None:
    step = _ipl(session)
    response = client.post(_url(step), data={**VALID, field: typed})
    assert response.status_code == 422
    assert _error(response.text, field).startswith(message)
    assert typed[:40] in response.text
    session.refresh(step)
    assert (step.ipl_type, step.basis) == (None, "")  # nothing saved, not even valid fields


def test_fields_that_do_not_apply_to_a_kind_are_not_saved(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    cause = session.exec(select(Step).where(Step.scenario_id == scenario.id)).one()
    response = client.post(_url(cause), data={**VALID, "typical_key": "pump_seal_failure",
                                              "system_tag": "P-101"})
    assert response.status_code == 200
    session.refresh(cause)
    assert (cause.system_tag, cause.typical_key, cause.ipl_type) == (
        "P-101", "pump_seal_failure", None)


def test_a_step_of_another_study_is_not_found(client: TestClient, session: Session) -> None:
    step = _ipl(session)
    other = make_scenario_tree(session, title="Other (invented)")
    response = client.get(f"/studies/{other.study_id}/steps/{step.id}/details")
    assert response.status_code == 404
    assert client.post(f"/studies/{other.study_id}/steps/{step.id}/details",
                       data=VALID).status_code == 404


def test_an_ipl_links_to_the_proof_test_calculator(client: TestClient, session: Session) -> None:
    step = _ipl(session)
    page = client.get(_url(step)).text
    assert f"/proof-test?step_id={step.id}" in page
    assert step.kind == StepKind.IPL


def test_a_modifier_says_its_kind_and_receptors(client: TestClient, session: Session) -> None:
    step = make_step(session, make_scenario_tree(session), kind=StepKind.CONDITIONAL_MODIFIER,
                     value=0.5, description="Operator present")
    response = client.post(_url(step), data={"modifier_kind": "presence",
                                             "receptors": ["people", "asset"], "basis": ""})
    assert response.status_code == 200
    session.refresh(step)
    assert (step.modifier_kind, step.receptors) == ("presence", "people,asset")


def test_a_cause_takes_its_type_and_a_per_task_value_as_people_say_it(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session)
    cause = session.exec(select(Step).where(Step.scenario_id == scenario.id)).one()
    response = client.post(_url(cause), data={
        "cause_type": "human_error", "per_opportunity_probability": "1 in 100",
        "opportunities_per_year": "52", "crew": "Shift A", "basis": ""})
    assert response.status_code == 200
    session.refresh(cause)
    assert (cause.cause_type, cause.per_opportunity_probability, cause.opportunities_per_year,
            cause.crew) == ("human_error", 0.01, 52.0, "Shift A")
    bad = client.post(_url(cause), data={"per_opportunity_probability": "0,01"})
    assert bad.status_code == 422
    assert "Use a dot for decimals" in _error(bad.text, "per_opportunity_probability")


def test_a_layer_can_act_after_an_added_sif(client: TestClient, session: Session) -> None:
    step = _ipl(session)
    client.post(_url(step), data={**VALID, "ipl_type": "passive", "typical_key": "",
                                  "acts_after_sif": "on"})
    session.refresh(step)
    assert step.acts_after_sif is True
    client.post(_url(step), data={**VALID, "ipl_type": "passive", "typical_key": ""})
    session.refresh(step)
    assert step.acts_after_sif is False


def test_the_error_factor_is_saved_and_its_source_named(client: TestClient,
                                                        session: Session) -> None:
    step = _ipl(session)
    page = client.post(_url(step), data={**VALID, "error_factor": "3"}).text
    assert "Now: EF 3, typed." in unescape(page)
    session.refresh(step)
    assert step.error_factor == 3.0
    # Blank: the typical-value row's range 1e-1 to 1 read as 5th to 95th percentile gives
    # EF = sqrt(1 / 1e-1) = 3.16, shown as 3.2 (by hand).
    page = client.post(_url(step), data={**VALID, "error_factor": ""}).text
    assert "Now: EF 3.2, from the typical-value range." in unescape(page)


def test_an_error_factor_below_1_is_refused_and_nothing_saved(client: TestClient,
                                                              session: Session) -> None:
    step = _ipl(session)
    reply = client.post(_url(step), data={**VALID, "error_factor": "0.3"})
    assert reply.status_code == 422
    assert "must be at least 1 and at most 100 (got 0.3)" in _error(reply.text, "error_factor")
    session.refresh(step)
    assert step.error_factor is None and step.basis == ""
