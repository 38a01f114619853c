"""The invented demo study: big enough to show the app, every step kind, both outcomes."""

import json

from sqlmodel import Session, func, select

from app.db.models import Study
from app.demo import DEMO_STUDY_PATH, load_demo_if_empty
from app.likelihood.types import StepKind
from app.services.study.tree import load_study_tree


def test_the_demo_file_says_it_is_invented() -> None:
    data = json.loads(DEMO_STUDY_PATH.read_text(encoding="utf-8"))
    assert data["invented"] is True
    assert "invented" in data["study"]["title"].lower() + data["study"]["facility"].lower()


def test_the_demo_study_has_the_promised_size(session: Session, demo_study: Study) -> None:
    tree = load_study_tree(session, demo_study.id)
    deviations = [d for n in tree.nodes for d in n.deviations]
    assert len(tree.nodes) >= 3
    assert len(deviations) >= 8
    assert len(tree.scenario_branches()) >= 15


def test_the_demo_uses_every_step_kind(session: Session, demo_study: Study) -> None:
    tree = load_study_tree(session, demo_study.id)
    kinds = {str(step.kind) for s in tree.scenario_branches() for step in s.steps}
    assert kinds == {str(kind) for kind in StepKind}


def test_some_demo_scenarios_meet_their_target_and_some_fall_short(
    session: Session, demo_study: Study
) -> None:
    tree = load_study_tree(session, demo_study.id)
    results = [s.outcome.result for s in tree.scenario_branches()]
    assert all(result is not None for result in results)
    verdicts = {result.meets_target for result in results if result is not None}
    assert verdicts == {True, False}


def test_the_demo_loads_only_into_an_empty_database(session: Session) -> None:
    assert load_demo_if_empty(session) is not None
    assert load_demo_if_empty(session) is None
    assert session.exec(select(func.count()).select_from(Study)).one() == 1


def test_the_demo_study_is_flagged_invented_and_stays_so_on_export(
    session: Session, demo_study: Study
) -> None:
    from app.services.exchange.study_file import export_study

    assert demo_study.invented is True
    assert export_study(session, demo_study.id)["invented"] is True


def test_the_demo_passes_its_checks_or_says_why_it_does_not(
    session: Session, demo_study: Study
) -> None:
    """Issue 9: a demo scenario that raises IPL-check warnings carries them on purpose, and
    its notes say so; every other scenario passes its own checks."""
    tree = load_study_tree(session, demo_study.id)
    warned = {s.scenario.cause[:40]: s.scenario.notes for s in tree.scenario_branches()
              if s.outcome.assessment is not None and s.outcome.assessment.warnings}
    assert warned, "the demo shows at least one warning on purpose"
    for cause, notes in warned.items():
        assert "Demo:" in notes and ("check" in notes), cause


def test_the_demo_has_no_fatality_probability_in_an_injury_rated_scenario(
    session: Session, demo_study: Study
) -> None:
    tree = load_study_tree(session, demo_study.id)
    for item in tree.scenario_branches():
        category = item.outcome.governing_category
        if category is not None and "injury" in category.name.lower():
            assert not any("fatality" in s.description.lower() for s in item.steps)
        assert all(s.kind is not StepKind.ENABLING_CONDITION
                   or "error" not in s.description.lower() for s in item.steps)
