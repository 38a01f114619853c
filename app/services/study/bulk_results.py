"""Every scenario of a study computed for storing, on both cores when the study is large.

An import and a rebuild compute every scenario once (`result_figures.scenario_columns`), one
scenario at a time and each independent of the others. A large study is cut into chunks of
`CHUNK` scenarios; one helper process (spawned, so it is safe from a server's threads) takes
chunks from the end while this process computes from the start, and whichever reaches a chunk
first computes it (a chunk not yet started is taken back from the helper). Each scenario is
computed by the same function either way, from the same values (plain tuples survive pickling
exactly), so the rows are the same as one process computing them in turn.
"""

import atexit
import gc
import os
import sys
import threading
from collections import namedtuple
from collections.abc import Callable, Iterator, Mapping, Sequence
from concurrent.futures import Future, ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from contextlib import contextmanager
from contextvars import ContextVar
from dataclasses import dataclass
from multiprocessing import get_context
from typing import Any

from app.services.study.result_figures import scenario_columns
from app.services.study.spread import ErrorFactorInputs

# Any in this module: plain rows from SQLAlchemy carry no column types.

PARALLEL_FROM = 2_000
"""The fewest scenarios worth a helper process (starting one costs about half a second)."""
CHUNK = 250
"""Scenarios per chunk: small enough that neither process waits long for the other's last."""
HANDED_OVER = 2
"""Chunks the helper holds at once (one computing, one waiting), so it never idles."""


@dataclass(frozen=True)
class PlainRows:
    """Rows as field names and plain tuples (what a helper process receives)."""

    fields: tuple[str, ...]
    values: tuple[tuple[Any, ...], ...]

    @classmethod
    def of(cls, rows: Sequence[Any]) -> "PlainRows":
        """SQLAlchemy rows (or any named tuples) as plain tuples."""
        return cls(tuple(rows[0]._fields) if rows else (), tuple(tuple(row) for row in rows))

    def named(self) -> list[Any]:
        """The rows again, each a named tuple read by attribute like the original rows."""
        row_type = namedtuple("Row", self.fields)  # type: ignore[misc]  # fields known at run time
        return [row_type(*values) for values in self.values]


@dataclass(frozen=True)
class StudyInputs:
    """What computing a study's scenarios reads besides each scenario's own rows."""

    study_id: int
    categories: PlainRows
    inputs: ErrorFactorInputs


@dataclass(frozen=True)
class Chunk:
    """Some scenarios of a study (their rating rows) and all their steps: the rows as read
    here, named tuples in the helper (each read by attribute)."""

    ratings: Sequence[Any]
    steps: Sequence[Any]


def compute_chunk(study: StudyInputs, chunk: Chunk) -> dict[int, dict[str, Any]]:
    """The stored-row columns of each scenario of a chunk (run in either process)."""
    categories = {row.id: row for row in study.categories.named()}
    steps: dict[int, list[Any]] = {}
    for step in chunk.steps:
        steps.setdefault(step.scenario_id, []).append(step)
    with no_cycle_collection():
        return {rating.id: {"scenario_id": rating.id, "study_id": study.study_id,
                            "node_id": rating.node_id,
                            **scenario_columns(rating, tuple(steps.get(rating.id, ())),
                                               categories, study.inputs, remember=False)}
                for rating in chunk.ratings}


def _compute_here(study: StudyInputs, chunk: Chunk) -> dict[int, dict[str, Any]]:
    """compute_chunk on named tuples of the rows, as the helper has them: reading a named
    tuple's field costs a fraction of a SQLAlchemy row's, and only one chunk is copied at a
    time."""
    return compute_sent_chunk(study, PlainRows.of(chunk.ratings), PlainRows.of(chunk.steps))


def compute_sent_chunk(study: StudyInputs, ratings: PlainRows, steps: PlainRows
                       ) -> dict[int, dict[str, Any]]:
    """compute_chunk in the helper, on the rows sent as plain tuples."""
    return compute_chunk(study, Chunk(ratings.named(), steps.named()))


class _ProcessSetting:
    """A process-wide setting changed while any thread holds it and put back when the last
    holder leaves (to what it was when the first came)."""

    def __init__(self, read: Callable[[], Any], change: Callable[[Any], Any],
                 write: Callable[[Any], None]) -> None:
        self.read, self.change, self.write = read, change, write
        self.holders = 0
        self.before: Any = None
        self.lock = threading.Lock()

    @contextmanager
    def held(self) -> Iterator[None]:
        """The setting changed for the block (counted: nested and concurrent holders share)."""
        with self.lock:
            if self.holders == 0:
                self.before = self.read()
                self.write(self.change(self.before))
            self.holders += 1
        try:
            yield
        finally:
            with self.lock:
                self.holders -= 1
                if self.holders == 0:
                    self.write(self.before)


def _set_collection(enabled: bool) -> None:
    if enabled:
        gc.enable()
    else:
        gc.disable()


_PAUSE = _ProcessSetting(gc.isenabled, lambda _: False, _set_collection)

SWITCH_INTERVAL = 0.001
"""Seconds a thread runs before another waiting one may take over, while the helper is fed
(the interpreter's default is 0.005). The executor's threads that send chunks to the helper
and read its results back need the interpreter between this thread's computing, several
times a chunk; at the default each wait was up to 5 ms, so the helper sat idle half the
time (it computed 14 of 40 chunks of a 10,000-scenario import; 18-19 at 1 ms)."""

_PROMPT_SWITCHES = _ProcessSetting(sys.getswitchinterval,
                                   lambda before: min(before, SWITCH_INTERVAL),
                                   sys.setswitchinterval)


@contextmanager
def no_cycle_collection() -> Iterator[None]:
    """The cycle collector paused while a whole study's rows, dicts or results are built
    (an import, a rebuild, the JSON export): they hold no cycles, the collector kept walking
    them (a sixth of an import's CPU, a quarter of the JSON export's) and they go when the
    work returns. Held by several threads at once (a server), the collector resumes when the
    last one leaves, if it was running when the first came."""
    with _PAUSE.held():
        yield


def chunks_of(ratings: Sequence[Any], steps: Mapping[int, Sequence[Any]],
              size: int | None = None) -> list[Chunk]:
    """The scenarios in chunks of `size` (CHUNK), each with its scenarios' steps (the same
    row objects: only a chunk sent to the helper is copied, as plain tuples)."""
    size = size or CHUNK
    return [Chunk(part, [step for rating in part for step in steps.get(rating.id, ())])
            for part in (ratings[start:start + size] for start in range(0, len(ratings), size))]


def compute_scenarios(study: StudyInputs, ratings: Sequence[Any],
                      steps: Mapping[int, Sequence[Any]], *,
                      parallel_from: int | None = None) -> dict[int, dict[str, Any]]:
    """Every scenario's stored-row columns, keyed by scenario id, in the ratings' order
    (on two processes from `parallel_from`, PARALLEL_FROM, scenarios)."""
    chunks = chunks_of(ratings, steps)
    if len(ratings) < (parallel_from or PARALLEL_FROM) or (os.cpu_count() or 1) < 2:
        return _in_order([_compute_here(study, chunk) for chunk in chunks])
    started = _STARTED.get()
    with _PROMPT_SWITCHES.held():
        if started is not None:
            return _in_order(_shared(study, chunks, started))
        with _helper() as helper:
            return _in_order(_shared(study, chunks, helper))


def _helper() -> ProcessPoolExecutor:
    return ProcessPoolExecutor(max_workers=1, mp_context=get_context("spawn"),
                               initializer=_leave_without_teardown)


def _leave_without_teardown() -> None:
    """In the helper: when it is told to stop, end the process at once instead of tearing its
    interpreter down object by object. The helper keeps nothing (each result is sent before
    the stop is read) and the import waited 0.15-0.2 s for that teardown."""
    atexit.register(_end_now)


def _end_now() -> None:
    sys.stdout.flush()
    sys.stderr.flush()
    os._exit(0)


_STARTED: ContextVar[ProcessPoolExecutor | None] = ContextVar("bulk_helper", default=None)


@contextmanager
def helper_started(expected_scenarios: int) -> Iterator[None]:
    """Start the helper process now when about `expected_scenarios` will be computed inside
    (an import: it starts while the file is read and written, not when computing begins);
    compute_scenarios inside uses it. Stopped on leaving."""
    if expected_scenarios < PARALLEL_FROM or (os.cpu_count() or 1) < 2:
        yield
        return
    with _helper() as helper:
        helper.submit(_ready)  # spawns the process and imports this module there
        token = _STARTED.set(helper)
        try:
            yield
        finally:
            _STARTED.reset(token)


def _ready() -> None:
    """Nothing: run in the helper so it has started and imported the arithmetic."""


def _shared(study: StudyInputs, chunks: list[Chunk], helper: ProcessPoolExecutor
            ) -> list[dict[int, dict[str, Any]]]:
    """This process computes chunks from the first on, the helper from the last back, two at
    a time handed over, until they meet; a chunk the helper could not compute (it died) is
    computed here."""
    done: list[dict[int, dict[str, Any]] | None] = [None] * len(chunks)
    given: dict[int, Future[dict[int, dict[str, Any]]]] = {}
    first, last = 0, len(chunks)  # chunks [first, last) are nobody's yet
    while first < last or given:
        for index in [i for i, future in given.items() if future.done() or first >= last]:
            done[index] = _result_or_here(given.pop(index), study, chunks[index])
        while len(given) < HANDED_OVER and first < last and _helping(helper):
            last -= 1
            given[last] = helper.submit(compute_sent_chunk, study,
                                        PlainRows.of(chunks[last].ratings),
                                        PlainRows.of(chunks[last].steps))
        if first < last:
            done[first] = _compute_here(study, chunks[first])
            first += 1
    return [part for part in done if part is not None]


def _helping(helper: ProcessPoolExecutor) -> bool:
    """False once the helper process has died (its chunks are then computed here)."""
    return not getattr(helper, "_broken", False)


def _result_or_here(future: "Future[dict[int, dict[str, Any]]]", study: StudyInputs,
                    chunk: Chunk) -> dict[int, dict[str, Any]]:
    try:
        return future.result()
    except BrokenProcessPool:
        return _compute_here(study, chunk)


def _in_order(parts: list[dict[int, dict[str, Any]]]) -> dict[int, dict[str, Any]]:
    return {scenario_id: row for part in parts for scenario_id, row in part.items()}
