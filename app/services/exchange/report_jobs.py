"""PDF reports made in the background: a thread reads the study and writes the HTML, a separate
process lays it out (WeasyPrint holds the interpreter for seconds on a large study, and in a
process of its own it slows no other request); the browser polls the job's state.

Jobs live in this process's memory (the app runs one worker): a restart forgets them, and only
the newest JOBS_KEPT are kept.
"""

import threading
import uuid
from collections import OrderedDict
from collections.abc import Callable
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, replace
from datetime import UTC, datetime
from enum import StrEnum
from multiprocessing import get_context

from jinja2 import Environment
from sqlalchemy import Engine
from sqlmodel import Session

from app.services.exchange.report import html_to_pdf
from app.services.exchange.report_source import live_report_html, revision_report_html
from app.services.exchange.report_summary import ReportKind

JOBS_KEPT = 20


class JobState(StrEnum):
    """Where a report job stands."""

    RUNNING = "running"
    READY = "ready"
    FAILED = "failed"


@dataclass(frozen=True)
class ReportJob:
    """One report being made: how far it is, in words and percent, and the file when ready."""

    job_id: str
    study_id: int
    revision_id: int | None
    state: JobState
    percent: int
    step: str
    started_at: datetime
    filename: str
    content: bytes = b""
    error: str = ""
    kind: ReportKind = ReportKind.FULL

    @property
    def done(self) -> bool:
        """No more progress will come: the file is ready or the job failed."""
        return self.state is not JobState.RUNNING


_jobs: OrderedDict[str, ReportJob] = OrderedDict()
_lock = threading.Lock()
_pool: ProcessPoolExecutor | None = None


def _layout_pool() -> ProcessPoolExecutor:
    global _pool  # one pool per server process, made on first use
    with _lock:
        if _pool is None:
            # spawn, not fork: the server has threads, and a forked copy of a lock can deadlock.
            _pool = ProcessPoolExecutor(max_workers=1, mp_context=get_context("spawn"))
        return _pool


def _update(job_id: str, **changes: object) -> None:
    with _lock:
        if job_id in _jobs:
            _jobs[job_id] = replace(_jobs[job_id], **changes)  # type: ignore[arg-type]


def get_job(study_id: int, job_id: str) -> ReportJob | None:
    """The job, if it is this study's and still kept."""
    with _lock:
        job = _jobs.get(job_id)
    return job if job is not None and job.study_id == study_id else None


def _run(job: ReportJob, engine: Engine, env: Environment) -> None:
    def progress(percent: int, step: str) -> None:
        _update(job.job_id, percent=percent, step=step)

    try:
        with Session(engine) as session:
            if job.revision_id is None:
                html = live_report_html(session, job.study_id, env=env, when=job.started_at,
                                        progress=progress, kind=job.kind)
            else:
                html = revision_report_html(session, job.study_id, job.revision_id, env=env,
                                            when=job.started_at, progress=progress,
                                            kind=job.kind)
        progress(50, "laying out the pages")
        content = _layout_pool().submit(html_to_pdf, html).result()
        _update(job.job_id, state=JobState.READY, percent=100, step="ready", content=content)
    except Exception as error:
        _update(job.job_id, state=JobState.FAILED, step="failed",
                error=f"The report could not be made: {error}")


def start_report_job(*, engine: Engine, env: Environment, study_id: int,
                     revision_id: int | None, filename: str,
                     kind: ReportKind = ReportKind.FULL,
                     runner: Callable[[ReportJob, Engine, Environment], None] = _run
                     ) -> ReportJob:
    """Start making a report (full or summary) in the background and return the job to poll."""
    job = ReportJob(uuid.uuid4().hex, study_id, revision_id, JobState.RUNNING, 0, "queued",
                    datetime.now(UTC).replace(microsecond=0), filename, kind=kind)
    with _lock:
        _jobs[job.job_id] = job
        while len(_jobs) > JOBS_KEPT:
            _jobs.popitem(last=False)
    threading.Thread(target=runner, args=(job, engine, env), daemon=True,
                     name=f"report-{job.job_id[:8]}").start()
    return job
