"""The study's default error factor per step kind: saved with a redirect, refused with the rule
named, 409 on a stale page, and used for a step with no other EF source."""

import re
from html import unescape

from fastapi.testclient import TestClient
from sqlmodel import Session

from app.db.models import Study
from app.likelihood.types import StepKind
from tests.factories import make_scenario_tree, make_step


def _version(page: str) -> str:
    found = re.search(r'name="version" value="(\d+)"', page)
    assert found is not None
    return found[1]


def test_defaults_save_redirect_and_reach_the_worksheet(client: TestClient,
                                                        session: Session) -> None:
    scenario = make_scenario_tree(session)
    make_step(session, scenario, kind=StepKind.ENABLING_CONDITION, value=0.5,
              description="Tank filling")
    url = f"/studies/{scenario.study_id}/error-factors"
    page = client.get(url).text
    reply = client.post(url, data={"enabling_condition": "4", "ipl": "", "version":
                                   _version(page)}, follow_redirects=False)
    assert reply.status_code == 303 and reply.headers["location"].endswith("?saved=1")
    session.expire_all()
    study = session.get(Study, scenario.study_id)
    assert study is not None and study.error_factor_default_enabling_condition == 4.0
    worksheet = client.get(f"/studies/{scenario.study_id}/worksheet",
                           follow_redirects=True).text
    assert "EF 4, study default for enabling conditions" in unescape(worksheet)


def test_a_bad_default_names_the_rule_and_saves_nothing(client: TestClient,
                                                        session: Session) -> None:
    scenario = make_scenario_tree(session)
    url = f"/studies/{scenario.study_id}/error-factors"
    version = _version(client.get(url).text)
    reply = client.post(url, data={"ipl": "0", "initiating_event": "3", "version": version})
    assert reply.status_code == 422
    assert "Default EF for IPLs" in unescape(reply.text)
    assert "at least 1 and at most 100 (got 0)" in unescape(reply.text)
    session.expire_all()
    study = session.get(Study, scenario.study_id)
    assert study is not None and study.error_factor_default_initiating_event is None


def test_a_stale_page_gets_409_and_keeps_the_saved_defaults(client: TestClient,
                                                            session: Session) -> None:
    scenario = make_scenario_tree(session)
    url = f"/studies/{scenario.study_id}/error-factors"
    version = _version(client.get(url).text)
    client.post(url, data={"ipl": "3", "version": version})
    reply = client.post(url, data={"ipl": "10", "version": version})
    assert reply.status_code == 409
    assert "nothing was saved" in reply.text
    session.expire_all()
    study = session.get(Study, scenario.study_id)
    assert study is not None and study.error_factor_default_ipl == 3.0


def test_the_criteria_page_links_to_the_defaults(client: TestClient, session: Session) -> None:
    scenario = make_scenario_tree(session)
    page = client.get(f"/studies/{scenario.study_id}/criteria").text
    assert f"/studies/{scenario.study_id}/error-factors" in page
