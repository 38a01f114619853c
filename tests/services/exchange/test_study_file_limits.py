"""A study file is checked in linear time, strictly, and within stated limits; a refused file
names the rule and writes nothing.

Each test here is the regression test of one crash or runaway class found by fuzzing imports.
"""

import json
import time
from copy import deepcopy
from typing import Any

import pytest
from sqlmodel import Session

from app.db.models import Study
from app.services.exchange.study_file import (
    MAX_NESTING,
    StudyFileError,
    export_study,
    parse_study_file,
)
from app.services.exchange.study_file_revisions import expand_revision_parts
from app.services.exchange.study_import import import_study_text
from app.settings import get_settings
from tests.samples import study_count

Data = dict[str, Any]


@pytest.fixture
def demo_file(session: Session, demo_study: Study) -> Data:
    """The demo study exported with its history (a revision is frozen first), its revision's
    snapshot embedded as files written before issue 14 have it."""
    from app.services.record.revisions import freeze_revision

    freeze_revision(session=session, study_id=demo_study.id or 0, frozen_by="T",
                    values={"label": "A", "note": "", "signed_off_by": "T"})
    return expand_revision_parts(export_study(session, demo_study.id or 0))


def refused(session: Session, data: Data | str) -> str:
    """Import `data`; it must be refused without a new study. Returns the message."""
    before = study_count(session)
    with pytest.raises(StudyFileError) as caught:
        import_study_text(session, data if isinstance(data, str) else json.dumps(data))
    assert study_count(session) == before
    return str(caught.value)


def first_step(data: Data) -> Data:
    step: Data = data["nodes"][0]["deviations"][0]["scenarios"][0]["steps"][0]
    return step


def test_many_repeated_references_are_refused_in_well_under_a_second(
    session: Session, demo_file: Data
) -> None:
    # Counting each ref's repeats in turn took 24 s for a 349 KB file of this shape.
    demo_file["recommendations"][0]["scenarios"] = ["S1"] * 45_000  # ~270 KB of refs
    # CPU time of this process, so a busy machine does not fail it; quadratic work still does.
    started = time.process_time()
    message = refused(session, demo_file)
    assert time.process_time() - started < 1.0
    assert "scenario ref 'S1' is listed twice" in message


def test_many_distinct_references_validate_in_well_under_a_second(demo_file: Data) -> None:
    demo_file["participants"] = [{"ref": f"P{i}", "name": f"Person {i}"} for i in range(8_000)]
    demo_file["session_days"] = [{"day": "2026-03-02", "attendees": [f"P{i}" for i in
                                                                     range(8_000)]}]
    raw = json.dumps(demo_file)
    assert len(raw) > 349_000
    started = time.process_time()
    parsed = parse_study_file(raw)
    assert time.process_time() - started < 1.0
    assert len(parsed.session_days[0].attendees) == 8_000


@pytest.mark.parametrize(("path", "value", "rule"), [
    (("severity_categories", 0, "tolerable_frequency"), "1e-4", "valid number"),
    (("nodes", 0, "deviations", 0, "scenarios", 0, "steps", 0, "credited"), "yes",
     "valid boolean"),
    (("nodes", 0, "deviations", 0, "scenarios", 0, "steps", 0, "kind"), "barrier",
     "initiating_event"),
    (("severity_categories", 0, "receptor"), "animals", "people"),
    (("recommendations", 0, "status"), "pending", "open"),
    (("nodes", 0, "name"), 7, "valid string"),
    (("invented",), 1, "valid boolean"),
])
def test_wrong_types_and_unknown_enumerations_are_refused_naming_the_rule(
    session: Session, demo_file: Data, path: tuple[Any, ...], value: Any, rule: str
) -> None:
    target = demo_file
    for key in path[:-1]:
        target = target[key]
    target[path[-1]] = value
    message = refused(session, demo_file)
    assert ".".join(str(p) for p in path) in message and rule in message


def test_nul_in_any_text_is_refused(session: Session, demo_file: Data) -> None:
    demo_file["nodes"][0]["name"] = "Feed\x00drum"
    assert "nodes.0.name" in (message := refused(session, demo_file)) and "NUL" in message


@pytest.mark.parametrize("depth", [MAX_NESTING + 1, 5_000, 200_000])
def test_deeply_nested_json_is_refused_with_the_nesting_rule(
    session: Session, demo_file: Data, depth: int
) -> None:
    demo_file["revisions"][0]["snapshot"]["study"]["scope"] = "PLACEHOLDER"
    deep = "[" * depth + "]" * depth
    raw = json.dumps(demo_file).replace('"PLACEHOLDER"', deep)
    assert f"nests more than {MAX_NESTING} levels" in refused(session, raw)


def test_a_revision_snapshot_is_validated_like_the_study(
    session: Session, demo_file: Data
) -> None:
    snapshot = demo_file["revisions"][0]["snapshot"]
    first_step(snapshot)["value"] = "0.1"
    message = refused(session, demo_file)
    assert "revisions.0.snapshot.nodes.0.deviations.0.scenarios.0.steps.0.value" in message


def test_a_snapshot_missing_its_content_is_refused(session: Session, demo_file: Data) -> None:
    demo_file["revisions"][0]["snapshot"] = {"nodes": [{"deviations": 5}]}
    assert "revisions.0.snapshot" in refused(session, demo_file)


PROOF_TEST = {
    "method": "IEC 61508-6 Annex B simplified equation", "architecture": "1oo1",
    "lambda_du": 5e-7, "lambda_dd": 0.0, "proof_test_interval_hours": 8760.0, "beta": None,
    "beta_d": None, "mttr_hours": 8.0, "mrt_hours": None, "pfd_avg": 0.00219,
    "typed": {"architecture": "1oo1", "lambda_du": "5e-7", "interval_value": "1",
              "interval_unit": "years"},
}


def ipl_step(data: Data) -> Data:
    steps = data["nodes"][0]["deviations"][0]["scenarios"][0]["steps"]
    step: Data = next(s for s in steps if s["kind"] == "ipl")
    return step


@pytest.mark.parametrize("spoil", [
    lambda p: p.update(typed=[]),
    lambda p: p.update(architecture="3oo5"),
    lambda p: p.update(lambda_du="5e-7"),
    lambda p: p["typed"].update(lambda_du=5e-7),
    lambda p: p.update(extra_key=1),
])
def test_proof_test_inputs_are_validated(
    session: Session, demo_file: Data, spoil: Any
) -> None:
    record = deepcopy(PROOF_TEST)
    spoil(record)
    ipl_step(demo_file)["proof_test"] = record
    assert ".proof_test." in refused(session, demo_file)


def test_valid_proof_test_inputs_import_and_the_calculator_shows_them(
    client: Any, session: Session, demo_file: Data
) -> None:
    ipl_step(demo_file)["proof_test"] = deepcopy(PROOF_TEST)
    study = import_study_text(session, json.dumps(demo_file))
    again = export_study(session, study.id or 0)
    assert ipl_step(again)["proof_test"]["typed"]["lambda_du"] == "5e-7"


@pytest.mark.parametrize(("field", "value"), [("ipl_type", "wall"),
                                               ("typical_key", "no_such_row")])
def test_layer_types_and_typical_keys_must_be_known(
    session: Session, demo_file: Data, field: str, value: str
) -> None:
    ipl_step(demo_file)[field] = value
    assert field in refused(session, demo_file)


def scenarios_in_one_node(data: Data, count: int) -> Data:
    """The file with its first deviation holding `count` copies of its first scenario."""
    deviation = data["nodes"][0]["deviations"][0]
    data["nodes"][0]["deviations"] = [deviation]
    model = deviation["scenarios"][0]
    deviation["scenarios"] = [{**model, "ref": f"X{i}"} for i in range(count)]
    data["recommendations"], data["change_log"], data["revisions"] = [], [], []
    return data


def test_a_node_over_the_per_node_limit_is_refused_before_validation(
    session: Session, demo_file: Data, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(get_settings(), "max_import_scenarios_per_node", 30)
    message = refused(session, scenarios_in_one_node(demo_file, 31))
    number = demo_file["nodes"][0]["number"]
    assert f"node '{number}' has 31 scenarios; a node may have at most 30" in message


def test_a_study_over_the_total_limit_is_refused(
    session: Session, demo_file: Data, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(get_settings(), "max_import_scenarios", 25)
    message = refused(session, scenarios_in_one_node(demo_file, 30))
    assert "the study has" in message and "a study file may have at most 25" in message


def test_the_default_limits_are_the_ones_the_readme_states() -> None:
    from app.settings import PROJECT_ROOT

    readme = (PROJECT_ROOT / "README.md").read_text(encoding="utf-8")
    settings = get_settings()
    assert f"{settings.max_import_scenarios:,} scenarios" in readme
    assert f"{settings.max_import_scenarios_per_node:,} scenarios per node" in readme


def test_the_file_size_limit_holds_the_largest_study_and_the_readme_states_both() -> None:
    # The largest study: 50,000 scenarios (the scenario limit) with one revision differing in
    # every node (test_the_largest_study_per_scenario_sizes_are_measured checks the sizes).
    from app.services.exchange.study_import import LARGEST_STUDY_FILE_BYTES
    from app.settings import PROJECT_ROOT, Settings

    largest = Settings.model_fields["max_import_scenarios"].default
    assert largest == 50_000
    limit = Settings.model_fields["max_import_bytes"].default
    assert LARGEST_STUDY_FILE_BYTES == 415_000_000
    assert limit >= 1.2 * LARGEST_STUDY_FILE_BYTES  # a fifth or more to spare
    readme = (PROJECT_ROOT / "README.md").read_text(encoding="utf-8")
    assert f"at most {limit // 2**20} MB" in readme
    assert f"about {LARGEST_STUDY_FILE_BYTES // 10**6} MB" in readme


def test_the_largest_study_per_scenario_sizes_are_measured(session: Session) -> None:
    """The bytes a scenario takes in a JSON export, measured on an invented bench study of the
    largest study's shape, stay within what the size limit was set from."""
    from app.routes.rendering import templates
    from app.services.exchange.exports import ExportFormat, build_export
    from app.services.exchange.study_import import (
        CONTENT_BYTES_PER_SCENARIO,
        FILE_BYTES_PER_SCENARIO,
    )
    from bench.generate import build_study

    scenarios = 600
    study = import_study_text(session, json.dumps(build_study(scenarios)))
    assert study.id is not None
    content = build_export(session=session, study_id=study.id, export_format=ExportFormat.JSON,
                           env=templates.env).content
    data = json.loads(content)
    figures = len(json.dumps(data["computed_figures"], ensure_ascii=False,
                             separators=(",", ":")).encode())
    assert len(content) / scenarios <= FILE_BYTES_PER_SCENARIO
    assert (len(content) - figures) / scenarios <= CONTENT_BYTES_PER_SCENARIO
    # ...and not far under either: the limit is set from them, not from a guess.
    assert len(content) / scenarios >= 0.9 * FILE_BYTES_PER_SCENARIO
