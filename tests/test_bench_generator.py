"""The benchmark's study generator: the shape issue 14 asks for, exact counts, same seed same file.

The generated file is checked with the app's own study-file schema, so a file `make bench`
imports is a file the app accepts.
"""

import json
from collections import Counter

import pytest

from app.services.exchange.study_schema import StudyFile
from bench.generate import LARGE_NODE_NUMBER, build_study, study_text


@pytest.fixture(scope="module")
def study() -> StudyFile:
    """A 2,000-scenario study, validated by the app's schema."""
    return StudyFile.model_validate_json(study_text(2_000))


def scenario_counts(study: StudyFile) -> dict[str, int]:
    """Scenarios per node number."""
    return {node.number: sum(len(d.scenarios) for d in node.deviations) for node in study.nodes}


@pytest.mark.parametrize("total", [1, 37, 1_000, 2_345])
def test_a_study_has_exactly_the_scenarios_asked_for(total: int) -> None:
    counts = scenario_counts(StudyFile.model_validate(build_study(total)))
    assert sum(counts.values()) == total


def test_the_second_node_holds_500_scenarios_and_the_others_about_200(study: StudyFile) -> None:
    counts = scenario_counts(study)
    assert counts[LARGE_NODE_NUMBER] == 500
    others = [count for number, count in counts.items() if number != LARGE_NODE_NUMBER]
    assert all(count <= 12 * 24 for count in others)  # at most 12 deviations of 24
    assert 150 <= sum(others[:-1]) / len(others[:-1]) <= 250  # the last node takes the rest


def test_deviations_hold_about_20_scenarios_and_nodes_about_10_deviations(
    study: StudyFile,
) -> None:
    typical = [n for n in study.nodes if n.number != LARGE_NODE_NUMBER][:-1]
    assert all(8 <= len(node.deviations) <= 12 for node in typical)
    sizes = [len(d.scenarios) for node in typical for d in node.deviations]
    assert all(16 <= size <= 24 for size in sizes)
    assert 19 <= sum(sizes) / len(sizes) <= 21


def test_every_scenario_has_4_to_6_steps_one_initiating_event_and_an_ipl(
    study: StudyFile,
) -> None:
    scenarios = [s for n in study.nodes for d in n.deviations for s in d.scenarios]
    lengths = Counter(len(s.steps) for s in scenarios)
    assert set(lengths) == {4, 5, 6}
    assert all(s.steps[0].kind == "initiating_event" for s in scenarios)
    assert all(any(step.kind == "ipl" for step in s.steps) for s in scenarios)


def test_the_file_says_it_is_invented_and_so_does_every_name(study: StudyFile) -> None:
    assert study.invented is True
    assert "invented" in study.study.title
    assert all("(invented)" in node.name for node in study.nodes)
    assert all(p.name.startswith("Invented") for p in study.participants)


def test_the_same_seed_gives_the_same_file_and_another_seed_another() -> None:
    assert study_text(500, seed=7) == study_text(500, seed=7)
    assert study_text(500, seed=7) != study_text(500, seed=8)
    assert json.loads(study_text(500, seed=7))["format"] == "tallyroom-study"
