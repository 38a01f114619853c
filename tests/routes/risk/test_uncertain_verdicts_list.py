"""The risk picture lists the scenarios whose verdict is uncertain (5 % < P(meets) < 95 %),
ranked by that probability either way.

External check: each P(meets) against scipy.stats.lognorm.cdf (median 0.1 x PFD per year,
sigma = ln EF / z95, target 1e-5 per year).
"""

import math
import re
from html import unescape

from fastapi.testclient import TestClient
from scipy import stats
from sqlmodel import Session

from app.db.models import Scenario
from app.likelihood.numbers import probability_text
from tests.factories import make_deviation, make_node, make_scenario, make_step, make_study

Z95 = stats.norm.ppf(0.95)  # scipy


def _scenario(session: Session, deviation_node: tuple[object, object], pfd: float, ef: float,
              cause: str) -> Scenario:
    _, deviation = deviation_node
    scenario = make_scenario(session, deviation, cause=cause)  # type: ignore[arg-type]
    make_step(session, scenario, value=pfd, error_factor=ef)
    return scenario


def _p_meets(pfd: float, ef: float) -> str:
    return probability_text(stats.lognorm(s=math.log(ef) / Z95, scale=0.1 * pfd).cdf(1e-5))


def test_uncertain_verdicts_are_listed_and_ranked_both_ways(client: TestClient,
                                                            session: Session) -> None:
    study = make_study(session)
    node = make_node(session, study)
    where = (node, make_deviation(session, node))
    _scenario(session, where, 1e-4, 10, "Close above (invented)")  # median 1e-5: P 50 %
    _scenario(session, where, 1e-3, 30, "A decade short (invented)")  # median 1e-4: P 13 %
    _scenario(session, where, 1e-3, 10, "Short, surely (invented)")  # P exactly 5 %: sure
    _scenario(session, where, 1e-7, 3, "Far below (invented)")  # sure to meet: not listed
    page = unescape(client.get(f"/studies/{study.id}/risk").text)
    rows = re.findall(r'<td><a [^>]*>([^<]*) →[^<]*</a></td>\s*<td class="num" data-p-meets>'
                      r'([^<]*)<', page)
    assert rows == [("A decade short (invented)", _p_meets(1e-3, 30)),
                    ("Close above (invented)", _p_meets(1e-4, 10))]
    assert [_p_meets(1e-4, 10), _p_meets(1e-3, 30)] == ["50 %", "13 %"]  # scipy
    likely = unescape(client.get(f"/studies/{study.id}/risk?uncertain=likely").text)
    found = re.findall(r"data-p-meets>([^<]*)<", likely)
    assert found == [_p_meets(1e-4, 10), _p_meets(1e-3, 30)]
