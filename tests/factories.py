"""Plain functions that build study content for tests."""

from typing import Any

from sqlmodel import Session

from app.db.models import Deviation, Node, Safeguard, Scenario, SeverityCategory, Step, Study
from app.likelihood.types import StepKind


def _save(session: Session, row: Any) -> Any:
    session.add(row)
    session.commit()
    session.refresh(row)
    return row


def make_study(session: Session, **values: Any) -> Study:
    """A study with one severity category (tolerable 1e-5 per year)."""
    study = _save(session, Study(**{"title": "Test study (invented)", **values}))
    make_category(session, study)
    return study


def make_category(session: Session, study: Study, **values: Any) -> SeverityCategory:
    """A severity category of `study`."""
    defaults = {"name": "Single fatality", "tolerable_frequency": 1e-5}
    return _save(session, SeverityCategory(study_id=study.id, **{**defaults, **values}))


def first_category(session: Session, study: Study) -> SeverityCategory:
    """The study's first severity category."""
    from app.db.queries import fetch_rows_of_study

    return fetch_rows_of_study(session, SeverityCategory, study.id)[0]


def make_node(session: Session, study: Study, **values: Any) -> Node:
    """A node of `study`."""
    defaults = {"number": "1", "name": "Feed drum"}
    return _save(session, Node(study_id=study.id, **{**defaults, **values}))


def make_deviation(session: Session, node: Node, **values: Any) -> Deviation:
    """A deviation of `node`."""
    defaults = {"guideword": "More", "parameter": "Level"}
    return _save(session, Deviation(study_id=node.study_id, node_id=node.id,
                                    **{**defaults, **values}))


def make_scenario(
    session: Session, deviation: Deviation, *, initiating_frequency: float = 0.1, **values: Any
) -> Scenario:
    """A scenario with its initiating event step."""
    study = session.get(Study, deviation.study_id)
    assert study is not None
    defaults = {"cause": "Level control fails high", "consequence": "Overfill and spill",
                "severity_category_id": first_category(session, study).id}
    scenario = _save(session, Scenario(study_id=deviation.study_id, deviation_id=deviation.id,
                                       **{**defaults, **values}))
    make_step(session, scenario, kind=StepKind.INITIATING_EVENT,
              value=initiating_frequency, description="Control loop failure", position=0)
    return scenario


def make_step(session: Session, scenario: Scenario, **values: Any) -> Step:
    """A step of `scenario` (an IPL at PFD 0.1 unless told otherwise)."""
    defaults = {"kind": StepKind.IPL, "value": 0.1, "description": "High level alarm",
                "position": 10}
    return _save(session, Step(study_id=scenario.study_id, scenario_id=scenario.id,
                               **{**defaults, **values}))


def make_safeguard(session: Session, scenario: Scenario, **values: Any) -> Safeguard:
    """A non-credited safeguard of `scenario`."""
    defaults = {"description": "Level gauge glass"}
    return _save(session, Safeguard(study_id=scenario.study_id, scenario_id=scenario.id,
                                    **{**defaults, **values}))


def make_scenario_tree(session: Session, **study_values: Any) -> Scenario:
    """A study with one node, one deviation and one scenario; returns the scenario."""
    study = make_study(session, **study_values)
    node = make_node(session, study)
    return make_scenario(session, make_deviation(session, node))
