"""PDF reports built in the background, in a process of their own.

The server starts a job: it writes the job's state file (`reports/<job>.json`, beside an SQLite
database; under data/ for PostgreSQL) and a thread starts `python -m app.report_worker`, which
reads the study, lays the report out part by part (report_parts.py), writes `<job>.pdf` and
keeps the state file up to date ("part 3 of 14"). The page polls the state. The worker exits
after each build, so the memory a build takes goes back to the system; the server's own
memory does not grow with the report.

One build runs at a time per server (the machine's cores are few and each build keeps one
busy); a request for a report already being built joins that job. Finished jobs are kept for
a day, at most JOBS_KEPT of them.
"""

import json
import os
import re
import subprocess
import sys
import threading
import time
import uuid
from collections.abc import Callable
from dataclasses import asdict, dataclass, replace
from datetime import UTC, datetime
from enum import StrEnum
from pathlib import Path
from typing import Any

from app.db.backups import sqlite_file
from app.services.exchange.report_summary import ReportKind
from app.settings import PROJECT_ROOT

JOBS_KEPT = 20
KEEP_SECONDS = 24 * 3600
REPORTS_FOLDER_NAME = "reports"
_JOB_ID = re.compile(r"[0-9a-f]{32}")


class JobState(StrEnum):
    """Where a report job stands."""

    QUEUED = "queued"
    RUNNING = "running"
    READY = "ready"
    FAILED = "failed"


@dataclass(frozen=True)
class ReportJob:
    """One report being built: which, how far (part n of m, and what), and how it ended."""

    job_id: str
    study_id: int
    revision_id: int | None
    kind: ReportKind
    filename: str
    started_at: str
    state: JobState = JobState.QUEUED
    part: int = 0
    parts: int = 0
    step: str = "waiting to start"
    error: str = ""
    pages: int = 0
    peak_mb: float = 0.0
    """The worker process's peak resident memory (ru_maxrss), for `make bench`."""

    @property
    def done(self) -> bool:
        """No more progress will come: the file is ready or the job failed."""
        return self.state in (JobState.READY, JobState.FAILED)

    @property
    def progress(self) -> str:
        """'part 3 of 14: scenarios 2.1.1 to 2.4.20', or where it stands before the parts."""
        if self.parts == 0:
            return self.step
        if self.part >= self.parts:
            return f"all {self.parts} parts laid out: {self.step}"
        return f"part {self.part + 1} of {self.parts}: {self.step}"


def reports_folder(database_url: str) -> Path:
    """Where report jobs live: a `reports` folder beside an SQLite database file, else under
    the project's data/ folder."""
    database = sqlite_file(database_url)
    base = database.parent if database is not None else PROJECT_ROOT / "data"
    return base / REPORTS_FOLDER_NAME


def state_path(folder: Path, job_id: str) -> Path:
    """The job's state file."""
    return folder / f"{job_id}.json"


def pdf_path(folder: Path, job_id: str) -> Path:
    """The job's finished PDF."""
    return folder / f"{job_id}.pdf"


def read_job(folder: Path, job_id: str) -> ReportJob | None:
    """The job as its state file says, or None (no such job, or not a job id at all)."""
    if not _JOB_ID.fullmatch(job_id):
        return None
    try:
        raw: dict[str, Any] = json.loads(state_path(folder, job_id).read_text("utf-8"))
    except (OSError, ValueError):
        return None
    return ReportJob(**{**raw, "kind": ReportKind(raw["kind"]), "state": JobState(raw["state"])})


def write_job(folder: Path, job: ReportJob) -> None:
    """Replace the job's state file in one step, so a reader never sees half of it."""
    folder.mkdir(parents=True, exist_ok=True)
    scratch = folder / f"{job.job_id}.json.{os.getpid()}.{threading.get_ident()}"
    scratch.write_text(json.dumps(asdict(job)), "utf-8")
    os.replace(scratch, state_path(folder, job.job_id))


def update_job(folder: Path, job_id: str, **changes: Any) -> ReportJob | None:
    """Change some of a job's fields; the job as it now stands."""
    job = read_job(folder, job_id)
    if job is None:
        return None
    job = replace(job, **changes)
    write_job(folder, job)
    return job


# Jobs whose worker this server process watches; a job not finished and not watched was
# left behind by a server that stopped.
_watched: set[str] = set()
_lock = threading.Lock()
_build_slot = threading.Semaphore(1)
Launch = Callable[[Path, ReportJob], tuple[int, str]]


def get_job(folder: Path, study_id: int, job_id: str) -> ReportJob | None:
    """The study's job, if it is kept; one whose server stopped mid-build says so."""
    job = read_job(folder, job_id)
    if job is None or job.study_id != study_id:
        return None
    with _lock:
        orphaned = not job.done and job_id not in _watched
    if orphaned:
        return update_job(folder, job_id, state=JobState.FAILED,
                          error="The server stopped while this report was being built: "
                                "build it again.")
    return job


def _same_report(job: ReportJob, study_id: int, revision_id: int | None,
                 kind: ReportKind) -> bool:
    return (job.study_id, job.revision_id, job.kind) == (study_id, revision_id, kind)


def _unfinished_job(folder: Path, study_id: int, revision_id: int | None,
                    kind: ReportKind) -> ReportJob | None:
    for job_id in sorted(_watched):
        job = read_job(folder, job_id)
        if job is not None and not job.done and _same_report(job, study_id, revision_id, kind):
            return job
    return None


def remove_old_jobs(folder: Path, *, now: float | None = None) -> None:
    """Delete finished jobs' files older than a day and all but the newest JOBS_KEPT, and
    the half-made files of builds nobody watches."""
    if not folder.is_dir():
        return
    states = sorted(folder.glob("*.json"), key=lambda p: p.stat().st_mtime, reverse=True)
    cutoff = (now if now is not None else time.time()) - KEEP_SECONDS
    for rank, state in enumerate(states):
        if state.stem in _watched or (rank < JOBS_KEPT and state.stat().st_mtime >= cutoff):
            continue
        state.unlink(missing_ok=True)
        pdf_path(folder, state.stem).unlink(missing_ok=True)
    # A build that was killed leaves its half-made files; nobody watches its job any more.
    for leftover in folder.glob("*.building*"):
        if leftover.name.split(".")[0] not in _watched:
            leftover.unlink(missing_ok=True)


def start_report_job(folder: Path, *, study_id: int, revision_id: int | None, filename: str,
                     kind: ReportKind = ReportKind.FULL, database_url: str,
                     launch: Launch | None = None) -> ReportJob:
    """Start building a report in the background, or join the one already being built for
    the same study, revision and kind; the job to poll."""
    with _lock:
        remove_old_jobs(folder)
        running = _unfinished_job(folder, study_id, revision_id, kind)
        if running is not None:
            return running
        job = ReportJob(uuid.uuid4().hex, study_id, revision_id, kind, filename,
                        datetime.now(UTC).replace(microsecond=0).isoformat())
        write_job(folder, job)
        _watched.add(job.job_id)
    run = launch or _worker_launcher(database_url)
    threading.Thread(target=_supervise, args=(folder, job, run), daemon=True,
                     name=f"report-{job.job_id[:8]}").start()
    return job


def _supervise(folder: Path, job: ReportJob, launch: Launch) -> None:
    """Wait for the build slot, run the worker, and fail the job if the worker ended
    without saying how it went (killed, out of memory, a crash before it could write)."""
    try:
        with _build_slot:
            update_job(folder, job.job_id, state=JobState.RUNNING, step="reading the study")
            code, said = launch(folder, job)
        final = read_job(folder, job.job_id)
        if final is not None and not final.done:
            last = said.strip().splitlines()[-1:] or [f"exit code {code}"]
            update_job(folder, job.job_id, state=JobState.FAILED,
                       error=f"The report could not be built: the build stopped ({last[0]}).")
    finally:
        with _lock:
            _watched.discard(job.job_id)


def _worker_launcher(database_url: str) -> Launch:
    def launch(folder: Path, job: ReportJob) -> tuple[int, str]:
        # The URL goes through the environment, not the command line (it may hold a password).
        env = {**os.environ, "TALLYROOM_DATABASE_URL": database_url}
        done = subprocess.run([sys.executable, "-m", "app.report_worker", str(folder),
                               job.job_id], env=env, cwd=PROJECT_ROOT, check=False,
                              stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
        return done.returncode, done.stderr[-2000:]
    return launch
