"""Each IPL check shows on the risk picture and the step details page, with its source.

A scenario is built to trigger each rule; the rules themselves are tested in tests/likelihood.
"""

import re
from html import unescape
from typing import Any

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import Scenario, Step
from app.likelihood.types import StepKind
from app.services.risk.ipl_checks import checked_steps
from tests.factories import make_scenario_tree, make_step

# What users see: document, edition and clause or table; "verify against your copy" apart.
BPCS = "IEC 61511-1:2016, clause 9.3"
INDEPENDENCE = "CCPS, Layer of Protection Analysis (AIChE, 2001), chapter 6"
OPERATOR = INDEPENDENCE
SIL_TABLE = "IEC 61511-1:2016, Table 4 (low demand SIL bands)"

IPL = StepKind.IPL
# rule -> (steps to add to a scenario whose initiating event is tagged DCS-1, source shown)
CASES: dict[str, tuple[list[dict[str, Any]], str]] = {
    "bpcs_pfd_floor": ([{"ipl_type": "bpcs", "value": 0.01, "system_tag": "DCS-2"}], BPCS),
    "cause_is_layer": ([{"ipl_type": "bpcs", "value": 0.1, "system_tag": "DCS-1"}],
                       INDEPENDENCE),
    "shared_bpcs": ([{"ipl_type": "bpcs", "value": 0.1, "system_tag": "DCS-2"},
                     {"ipl_type": "bpcs", "value": 0.1, "system_tag": "dcs-2",
                      "description": "High pressure alarm"}], BPCS),
    "operator_time": ([{"ipl_type": "operator_response", "value": 0.1,
                        "response_time_minutes": 5}], OPERATOR),
    "operator_pfd_floor": ([{"ipl_type": "operator_response", "value": 0.01,
                             "response_time_minutes": 20}], OPERATOR),
    "sil_claim_mismatch": ([{"ipl_type": "sif", "value": 0.001, "sil_claimed": 1}], SIL_TABLE),
    "outside_typical_range": ([{"ipl_type": "passive", "value": 0.1, "typical_key": "dike"}],
                              OPERATOR),
}


def scenario_steps(session: Session, scenario: Scenario) -> list[Step]:
    """The scenario's stored steps in order, the initiating event first."""
    statement = select(Step).where(Step.scenario_id == scenario.id).order_by(Step.position, Step.id)
    return list(session.exec(statement).all())


def _scenario_for(session: Session, steps: list[dict[str, Any]]) -> Scenario:
    """A scenario whose cause is a failure of DCS-1, with the given layers added."""
    scenario = make_scenario_tree(session)
    cause = scenario_steps(session, scenario)[0]
    cause.system_tag = "DCS-1"
    session.add(cause)
    session.commit()
    for values in steps:
        make_step(session, scenario, kind=IPL, **values)
    return scenario


def _rules_shown(page: str) -> list[str]:
    return re.findall(r'class="check-warning" data-rule="(\w+)"', page)


@pytest.mark.parametrize("rule", list(CASES))
def test_each_check_shows_on_the_risk_picture_with_its_source(
    client: TestClient, session: Session, rule: str
) -> None:
    steps, source = CASES[rule]
    scenario = _scenario_for(session, steps)
    page = unescape(client.get(f"/studies/{scenario.study_id}/risk").text)
    assert rule in _rules_shown(page)
    assert f"Source: {source}" in page
    assert "(from memory)" not in page  # the status is a marker beside the citation
    assert f'data-scenario="{scenario.id}"' in page
    assert "⚠" in page and "Check: " in page  # an icon and a word, not colour alone


@pytest.mark.parametrize("rule", list(CASES))
def test_each_check_shows_on_the_step_details_page(
    client: TestClient, session: Session, rule: str
) -> None:
    scenario = _scenario_for(session, CASES[rule][0])
    step_id = scenario_steps(session, scenario)[-1].id
    page = client.get(f"/studies/{scenario.study_id}/steps/{step_id}/details").text
    assert rule in _rules_shown(page)


def test_a_rule_of_thumb_says_common_practice_no_source(
    client: TestClient, session: Session
) -> None:
    """The enabling-condition illustrations carry no published source."""
    scenario = make_scenario_tree(session)
    make_step(session, scenario, kind=StepKind.ENABLING_CONDITION, value=0.9,
              typical_key="freezing_season", description="Winter")
    page = unescape(client.get(f"/studies/{scenario.study_id}/risk").text)
    assert _rules_shown(page) == ["outside_typical_range"]
    assert ">Common practice, no published source<" in page


def test_a_clean_scenario_raises_no_warning(client: TestClient, session: Session) -> None:
    scenario = _scenario_for(session, [{"ipl_type": "relief_device", "value": 0.01,
                                        "typical_key": "relief_valve"}])
    page = client.get(f"/studies/{scenario.study_id}/risk").text
    assert _rules_shown(page) == []
    assert "No IPL check raises a warning in this study." in page


def test_the_cause_system_comes_from_the_initiating_event(session: Session) -> None:
    scenario = _scenario_for(session, CASES["cause_is_layer"][0])
    checked = checked_steps(scenario_steps(session, scenario))
    assert [(s.kind, s.cause_system_tag) for s in checked] == [
        ("initiating_event", "DCS-1"), ("ipl", "")]
