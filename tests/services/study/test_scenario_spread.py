"""A stored scenario's uncertainty: which EF each step gets, and the lognormal of its result.

External checks: scipy.stats.lognorm (ppf, mean, cdf) for the scenario's distribution; a
seeded numpy Monte Carlo of 10^6 draws for P(meets) and the band; the EF of a round by hand
from the natural logs of its estimates (sample standard deviation, n - 1).
"""

import math

import numpy as np
import pytest
from scipy import stats
from sqlmodel import Session, col, select

from app.db.models import Step, Study
from app.likelihood.numbers import probability_text
from app.likelihood.types import Receptor, StepKind
from app.likelihood.uncertainty import ErrorFactorSource
from app.services.estimates import answers, rounds
from app.services.estimates.answers import Answerer
from app.services.study.spread import (
    action_effect,
    load_error_factor_inputs,
    scenario_spread,
)
from app.services.study.tree import load_study_tree
from tests.factories import make_scenario_tree, make_step

TARGET = ((Receptor.PEOPLE, 1e-5),)


def _steps(session: Session, scenario_id: int | None) -> list[Step]:
    """The scenario's steps in creation order (PostgreSQL returns rows in any order)."""
    found = select(Step).where(Step.scenario_id == scenario_id).order_by(col(Step.id))
    return list(session.exec(found).all())


def test_typed_error_factors_give_the_lognormal_scipy_gives(session: Session) -> None:
    scenario = make_scenario_tree(session)
    event = _steps(session, scenario.id)[0]
    event.error_factor = 3.0
    make_step(session, scenario, value=0.01, error_factor=10.0)
    make_step(session, scenario, value=0.1, position=20)  # no EF: adds no variance
    spread = scenario_spread(_steps(session, scenario.id), TARGET)
    assert spread is not None
    dist = spread.governing.distribution
    sigma = math.hypot(math.log(3) / stats.norm.ppf(0.95), math.log(10) / stats.norm.ppf(0.95))
    frozen = stats.lognorm(s=sigma, scale=0.1 * 0.01 * 0.1)  # scipy: median = product
    assert dist.p05 == pytest.approx(frozen.ppf(0.05), rel=1e-9)
    assert dist.p95 == pytest.approx(frozen.ppf(0.95), rel=1e-9)
    assert dist.mean == pytest.approx(frozen.mean(), rel=1e-9)
    assert dist.probability_meets_target == pytest.approx(frozen.cdf(1e-5), rel=1e-9)
    assert spread.note_of(event.id) == "EF 3, typed"


def test_p_meets_matches_a_seeded_monte_carlo(session: Session) -> None:
    scenario = make_scenario_tree(session)
    make_step(session, scenario, value=0.01, error_factor=10.0)
    make_step(session, scenario, value=0.1, error_factor=3.0, position=20)
    spread = scenario_spread(_steps(session, scenario.id), TARGET)
    assert spread is not None
    rng = np.random.default_rng(13)  # numpy Monte Carlo, 10^6 draws, seed 13
    z = stats.norm.ppf(0.95)
    draws = 0.1 * rng.lognormal(math.log(0.01), math.log(10) / z, 1_000_000) \
        * rng.lognormal(math.log(0.1), math.log(3) / z, 1_000_000)
    dist = spread.governing.distribution
    # Tolerance: 0.002 on a probability is over four standard errors at n = 10^6 (sqrt(pq/n)
    # <= 5e-4); 1 % on the percentiles.
    assert dist.probability_meets_target == pytest.approx(np.mean(draws <= 1e-5), abs=2e-3)
    assert dist.p95 == pytest.approx(np.quantile(draws, 0.95), rel=0.01)
    assert dist.p05 == pytest.approx(np.quantile(draws, 0.05), rel=0.01)


def test_the_ef_comes_from_the_last_revealed_round_before_the_typical_range(
        session: Session) -> None:
    scenario = make_scenario_tree(session)
    alarm = make_step(session, scenario, value=0.1, typical_key="dike")
    found = rounds.open_round(session=session, study_id=scenario.study_id,
                              step_id=alarm.id or 0, question="How likely does it fail?")
    for person, text in (("A. Lind", "0.01"), ("B. Osei", "0.1"), ("C. Ruiz", "0.3")):
        answers.give_estimate(session=session, study_id=scenario.study_id,
                              round_id=found.id or 0, answerer=Answerer(person, None), text=text)
    open_inputs = load_error_factor_inputs(session, scenario_study(session, scenario.study_id))
    assert alarm.id not in open_inputs.last_rounds  # hidden while open: not read
    rounds.reveal_round(session=session, study_id=scenario.study_id, round_id=found.id or 0)
    inputs = load_error_factor_inputs(session, scenario_study(session, scenario.study_id))
    spread = scenario_spread(_steps(session, scenario.id), TARGET, inputs)
    assert spread is not None
    # By hand: s = sample standard deviation of ln 0.01, ln 0.1, ln 0.3; EF = exp(1.645 s).
    logs = [math.log(0.01), math.log(0.1), math.log(0.3)]
    mean = sum(logs) / 3
    s = math.sqrt(sum((x - mean) ** 2 for x in logs) / 2)
    note = next(n for n in spread.notes if n.step_id == alarm.id)
    assert note.factor.source is ErrorFactorSource.ESTIMATE_ROUND
    assert note.factor.value == pytest.approx(math.exp(stats.norm.ppf(0.95) * s))
    assert note.note.endswith("from round 1's spread")


def scenario_study(session: Session, study_id: int) -> Study:
    found = session.get(Study, study_id)
    assert found is not None
    return found


def test_the_study_default_applies_per_kind_and_is_named(session: Session) -> None:
    scenario = make_scenario_tree(session, error_factor_default_enabling_condition=4.0)
    condition = make_step(session, scenario, kind=StepKind.ENABLING_CONDITION, value=0.5,
                          description="Tank filling")
    tree = load_study_tree(session, scenario.study_id)
    spread = tree.scenario_branches()[0].spread
    assert spread is not None
    assert spread.note_of(condition.id) == "EF 4, study default for enabling conditions"
    assert spread.note_of(_steps(session, scenario.id)[0].id) == "no EF: taken as exact"


def test_an_action_is_judged_before_and_after_on_the_distribution(session: Session) -> None:
    scenario = make_scenario_tree(session)
    make_step(session, scenario, value=0.01, error_factor=10.0)  # median 1e-3 against 1e-5
    spread = scenario_spread(_steps(session, scenario.id), TARGET)
    assert spread is not None
    effect = action_effect(spread, 100.0)
    assert effect is not None
    sigma = math.log(10) / stats.norm.ppf(0.95)
    assert effect.before == pytest.approx(stats.lognorm(s=sigma, scale=1e-3).cdf(1e-5))
    # scipy: after dividing by 100 the median sits on the target, P(meets) = 0.5.
    assert effect.after == pytest.approx(stats.lognorm(s=sigma, scale=1e-5).cdf(1e-5))
    assert effect.after == pytest.approx(0.5)


def test_probability_text_never_says_0_or_100_for_a_near_miss() -> None:
    assert [probability_text(p) for p in (0.0, 0.004, 0.5, 0.996, 1.0)] == [
        "0 %", "< 1 %", "50 %", "> 99 %", "100 %"]
