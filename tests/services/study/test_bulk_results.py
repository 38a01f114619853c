"""A whole study's stored results, computed in bulk (import, rebuild), equal each scenario
computed on its own, as an edit computes it.

The bulk path (`bulk_results.compute_scenarios`) keeps nothing per scenario and, for a large
study, shares the chunks with a spawned helper process; the edit path
(`stored_results.compute_rows`) reads each scenario's own rows through the per-scenario
caches. The two are separate code paths over the same arithmetic, so equal rows (every
column, the figures JSON text byte for byte) say the bulk path changed no figure.
"""

import json
import sys
from concurrent.futures import Future
from concurrent.futures.process import BrokenProcessPool
from pathlib import Path
from typing import Any

import pytest
from sqlalchemy import select
from sqlmodel import Session

from app.db.models import ScenarioResultRow, Study
from app.db.queries import (
    CATEGORY_TARGETS,
    fetch_plain_rows,
    scenario_ratings_of_study,
    step_figures_of_study,
)
from app.services.exchange.study_import import import_study_text
from app.services.study import bulk_results
from app.services.study.bulk_results import (
    PlainRows,
    StudyInputs,
    chunks_of,
    compute_chunk,
    compute_scenarios,
)
from app.services.study.spread import load_error_factor_inputs
from app.services.study.stored_results import compute_rows, is_current
from bench.generate import build_study

SCENARIOS = 600


def stored_rows(session: Session, study_id: int) -> dict[int, dict[str, Any]]:
    """The stored scenario rows of a study, as column mappings."""
    table: Any = ScenarioResultRow
    return {row.scenario_id: dict(row._mapping) for row in session.connection().execute(
        select(table).where(table.study_id == study_id))}


def bulk_inputs(session: Session, study_id: int) -> tuple[StudyInputs, list[Any],
                                                          dict[int, list[Any]]]:
    """What compute_study_rows hands the bulk path, read from the database."""
    steps: dict[int, list[Any]] = {}
    for step in fetch_plain_rows(session, step_figures_of_study(study_id)):
        steps.setdefault(step.scenario_id, []).append(step)
    study = session.get(Study, study_id)
    assert study is not None
    categories = fetch_plain_rows(session, CATEGORY_TARGETS, {"study_id": study_id})
    return (StudyInputs(study_id, PlainRows.of(categories),
                        load_error_factor_inputs(session, study)),
            fetch_plain_rows(session, scenario_ratings_of_study(study_id)), steps)


@pytest.fixture
def two_processes(monkeypatch: pytest.MonkeyPatch) -> None:
    """A 600-scenario study computed on two processes, in chunks of 40."""
    monkeypatch.setattr(bulk_results, "PARALLEL_FROM", 100)
    monkeypatch.setattr(bulk_results, "CHUNK", 40)


@pytest.mark.usefixtures("two_processes")
def test_an_imported_study_stores_what_each_scenario_computes_on_its_own(
    session: Session,
) -> None:
    # An invented bench study: short, met, flagged (with withdrawn credits and their
    # labels), high-demand and incomplete scenarios among its 600.
    study = import_study_text(session, json.dumps(build_study(SCENARIOS, seed=19)))
    study_id = study.id or 0
    assert is_current(session, study_id)
    stored = stored_rows(session, study_id)
    assert len(stored) == SCENARIOS
    one_by_one = compute_rows(session, stored)  # the edit path, scenario by scenario
    assert stored == one_by_one
    kinds = {(row["computed"], row["short"], row["flagged"], row["incomplete"])
             for row in stored.values()}
    assert len(kinds) >= 4  # the study exercises more than one kind of outcome


def test_two_processes_compute_the_same_rows_as_one(session: Session) -> None:
    study = import_study_text(session, json.dumps(build_study(300, seed=5)))
    study_inputs, ratings, steps = bulk_inputs(session, study.id or 0)
    in_turn = compute_scenarios(study_inputs, ratings, steps, parallel_from=10**9)
    shared = compute_scenarios(study_inputs, ratings, steps, parallel_from=1)
    assert list(shared) == list(in_turn) == [rating.id for rating in ratings]
    assert shared == in_turn


def test_a_chunk_the_helper_could_not_compute_is_computed_here(session: Session) -> None:
    study = import_study_text(session, json.dumps(build_study(30, seed=3)))
    study_inputs, ratings, steps = bulk_inputs(session, study.id or 0)
    chunk = chunks_of(ratings, steps, size=30)[0]
    died: Future[dict[int, dict[str, Any]]] = Future()
    died.set_exception(BrokenProcessPool("the helper process died"))
    assert bulk_results._result_or_here(died, study_inputs, chunk) == compute_chunk(
        study_inputs, chunk)


@pytest.mark.usefixtures("two_processes")
def test_a_large_study_is_shared_with_a_helper_process(
    session: Session, monkeypatch: pytest.MonkeyPatch
) -> None:
    study = import_study_text(session, json.dumps(build_study(120, seed=7)))
    study_inputs, ratings, steps = bulk_inputs(session, study.id or 0)
    handed: list[int] = []
    real_shared = bulk_results._shared

    def counted(*args: Any) -> Any:
        handed.append(len(args[1]))
        return real_shared(*args)

    monkeypatch.setattr(bulk_results, "_shared", counted)
    compute_scenarios(study_inputs, ratings, steps)
    assert handed == [3]  # 120 scenarios in chunks of 40, shared with the helper


@pytest.mark.usefixtures("two_processes")
def test_a_helper_started_before_the_computation_is_the_one_it_uses(
    session: Session, monkeypatch: pytest.MonkeyPatch
) -> None:
    study = import_study_text(session, json.dumps(build_study(120, seed=11)))
    study_inputs, ratings, steps = bulk_inputs(session, study.id or 0)
    started: list[object] = []
    real_helper = bulk_results._helper

    def counted() -> Any:
        started.append(object())
        return real_helper()

    monkeypatch.setattr(bulk_results, "_helper", counted)
    with bulk_results.helper_started(expected_scenarios=len(ratings)):
        shared = compute_scenarios(study_inputs, ratings, steps)
    assert len(started) == 1
    assert shared == compute_scenarios(study_inputs, ratings, steps, parallel_from=10**9)
    with bulk_results.helper_started(expected_scenarios=10):  # too few: no process started
        compute_scenarios(study_inputs, ratings, steps, parallel_from=10**9)
    assert len(started) == 1


@pytest.mark.usefixtures("two_processes")
def test_threads_switch_every_millisecond_while_the_helper_is_fed_and_as_before_after(
    session: Session, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The executor's threads that feed the helper wait for this thread's computing; at the
    interpreter's default 5 ms the helper sat idle half the time."""
    study = import_study_text(session, json.dumps(build_study(120, seed=13)))
    study_inputs, ratings, steps = bulk_inputs(session, study.id or 0)
    before = sys.getswitchinterval()
    seen: list[float] = []
    real_shared = bulk_results._shared

    def watched(*args: Any) -> Any:
        seen.append(sys.getswitchinterval())
        return real_shared(*args)

    monkeypatch.setattr(bulk_results, "_shared", watched)
    compute_scenarios(study_inputs, ratings, steps)
    assert seen == [pytest.approx(bulk_results.SWITCH_INTERVAL)] and before > seen[0]
    assert sys.getswitchinterval() == before


class _TornDown:
    """Writes its file when the process tears its objects down on the way out."""

    def __init__(self, path: str) -> None:
        self.path = path

    def __del__(self) -> None:
        Path(self.path).write_text("torn down")


_KEPT: list[_TornDown] = []


def keep_until_teardown(path: str) -> int:
    """Run in the helper: an object that only the process's teardown would delete."""
    _KEPT.append(_TornDown(path))
    return len(_KEPT)


def test_the_helper_ends_without_tearing_its_interpreter_down(tmp_path: Path) -> None:
    """The import waited 0.15-0.2 s for the helper's teardown after the last result was in."""
    mark = tmp_path / "mark"
    with bulk_results._helper() as helper:
        assert helper.submit(keep_until_teardown, str(mark)).result() == 1
    assert not mark.exists()
