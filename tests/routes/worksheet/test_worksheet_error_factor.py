"""A step's error factor typed on the worksheet: saved through the version guard, refused with
the rule named, and the scenario's band and P(meets target) recomputed in the reply.

External check: the band and P(meets) against scipy.stats.lognorm (median 1e-3 per year, EF 10
read as sigma = ln 10 / z95, target 1e-5).
"""

import html as html_text
import math
import re

import pytest
from fastapi.testclient import TestClient
from scipy import stats
from sqlmodel import Session

from app.db.models import Scenario, Step
from app.likelihood.numbers import format_number, probability_text
from tests.factories import make_scenario_tree, make_step
from tests.helpers import HX, attrs_of

Z95 = stats.norm.ppf(0.95)  # scipy: the standard normal 95th percentile


@pytest.fixture
def layer(session: Session) -> Step:
    scenario = make_scenario_tree(session)  # initiating event 0.1 /yr, target 1e-5 /yr
    return make_step(session, scenario, value=0.01, description="High level trip")


def page_of(client: TestClient, step: Step) -> str:
    return client.get(f"/studies/{step.study_id}/worksheet", follow_redirects=True).text


def save_ef(client: TestClient, step: Step, text: str, version: str, orig: str = "") -> str:
    reply = client.post(f"/studies/{step.study_id}/steps/{step.id}",
                        data={"error_factor": text, "orig_error_factor": orig,
                              "version": version}, headers=HX)
    return f"{reply.status_code}\n{reply.text}"


def spread_figure(html: str, name: str) -> str:
    found = re.search(rf'data-spread="{name}">([^<]*)</dd>', html)
    return html_text.unescape(found.group(1)) if found else ""


def test_a_typed_ef_moves_the_band_and_p_meets(client: TestClient, session: Session,
                                                layer: Step) -> None:
    page = page_of(client, layer)
    version = attrs_of(page, f"step-{layer.id}-version")["value"]
    assert "exact" in page  # no EF yet: the figures are exact
    answer = save_ef(client, layer, "10", version)
    status, html = answer.split("\n", 1)
    assert status == "200"
    frozen = stats.lognorm(s=math.log(10) / Z95, scale=1e-3)  # scipy
    assert spread_figure(html, "band") == (
        f"{format_number(frozen.ppf(0.05))} to {format_number(frozen.ppf(0.95))} /yr")
    assert spread_figure(html, "p-meets") == probability_text(frozen.cdf(1e-5))
    assert "EF 10, typed" in html
    session.expire_all()
    assert session.get(Step, layer.id).error_factor == 10.0  # type: ignore[union-attr]


@pytest.mark.parametrize(("text", "rule_words"), [
    ("0.5", "at least 1 and at most 100"),
    ("500", "at least 1 and at most 100"),
    ("often", "a number from 1 to 100"),
    ("nan", "at least 1 and at most 100"),
])
def test_a_bad_ef_is_refused_with_the_rule_and_nothing_saved(
        client: TestClient, session: Session, layer: Step, text: str, rule_words: str) -> None:
    version = attrs_of(page_of(client, layer), f"step-{layer.id}-version")["value"]
    status, html = save_ef(client, layer, text, version).split("\n", 1)
    assert status == "422"
    assert rule_words in html
    session.expire_all()
    assert session.get(Step, layer.id).error_factor is None  # type: ignore[union-attr]


def test_an_ef_typed_on_a_stale_page_answers_409(client: TestClient, session: Session,
                                                  layer: Step) -> None:
    version = attrs_of(page_of(client, layer), f"step-{layer.id}-version")["value"]
    assert save_ef(client, layer, "3", version).startswith("200")
    # The same page (old version, original blank) now types another EF: someone saved since.
    status, html = save_ef(client, layer, "5", version).split("\n", 1)
    assert status == "409"
    assert "3" in html  # the other value is shown
    session.expire_all()
    assert session.get(Step, layer.id).error_factor == 3.0  # type: ignore[union-attr]


def test_clearing_the_ef_falls_back_to_the_next_source(client: TestClient, session: Session,
                                                       layer: Step) -> None:
    scenario = session.get(Scenario, layer.scenario_id)
    assert scenario is not None
    version = attrs_of(page_of(client, layer), f"step-{layer.id}-version")["value"]
    assert save_ef(client, layer, "3", version).startswith("200")
    page = page_of(client, layer)
    version = attrs_of(page, f"step-{layer.id}-version")["value"]
    status, html = save_ef(client, layer, "", version, orig="3").split("\n", 1)
    assert status == "200"
    assert "no EF: taken as exact" in html
    session.expire_all()
    assert session.get(Step, layer.id).error_factor is None  # type: ignore[union-attr]
