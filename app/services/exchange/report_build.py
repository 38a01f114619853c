"""The build a report job's worker process runs: read the study, lay the report out part by
part into the job's PDF, and keep the job's state file saying how far it is."""

import os
import resource
import threading
from datetime import datetime
from pathlib import Path

from jinja2 import Environment
from sqlalchemy import Engine
from sqlmodel import Session

from app.services.exchange.report_jobs import JobState, pdf_path, read_job, update_job
from app.services.exchange.report_source import write_report_pdf

LAYOUT_WORKERS = min(2, os.cpu_count() or 1)
"""Processes laying parts out side by side: two halve the time on a two-core machine; more
would each add a part's memory (DEVELOPERS.md, "Laid out in parts")."""


def _resident_kb(pid: int) -> int:
    """VmRSS of one process and, recursively, of its children (Linux /proc), in KB."""
    try:
        status = Path(f"/proc/{pid}/status").read_text()
        children = Path(f"/proc/{pid}/task/{pid}/children").read_text().split()
    except OSError:
        return 0
    own = next((int(line.split()[1]) for line in status.splitlines()
                if line.startswith("VmRSS:")), 0)
    return own + sum(_resident_kb(int(child)) for child in children)


class MemoryWatch(threading.Thread):
    """Samples the resident memory of this process and its layout processes together, four
    times a second, and keeps the largest sum: the build's peak memory, for `make bench`."""

    def __init__(self) -> None:
        super().__init__(daemon=True, name="report-memory")
        self.peak_kb = 0
        self.stopped = threading.Event()

    def run(self) -> None:
        while not self.stopped.wait(0.25):
            self.peak_kb = max(self.peak_kb, _resident_kb(os.getpid()))

    def peak_mb(self) -> float:
        """The largest sum seen, and never less than this process's own peak."""
        own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
        return round(max(self.peak_kb, own) / 1024, 1)


def build_job(folder: Path, job_id: str, *, engine: Engine, env: Environment) -> None:
    """Build the job's report; the state file ends READY (with the page count) or FAILED
    (with the reason in words)."""
    job = read_job(folder, job_id)
    if job is None:
        return
    target = pdf_path(folder, job_id)
    scratch = target.with_suffix(".building.pdf")

    def progress(done: int, total: int, label: str) -> None:
        update_job(folder, job_id, part=done, parts=total, step=label)

    watch = MemoryWatch()
    watch.start()
    try:
        with Session(engine) as session:
            pages = write_report_pdf(session, job.study_id, scratch, env=env,
                                     when=datetime.fromisoformat(job.started_at),
                                     revision_id=job.revision_id, kind=job.kind,
                                     progress=progress, workers=LAYOUT_WORKERS)
        os.replace(scratch, target)
        update_job(folder, job_id, state=JobState.READY, step="ready", pages=pages,
                   peak_mb=watch.peak_mb())
    except Exception as error:  # any failure is told to the user, never a 500
        scratch.unlink(missing_ok=True)
        update_job(folder, job_id, state=JobState.FAILED, peak_mb=watch.peak_mb(),
                   error=f"The report could not be built: {error}")
    finally:
        watch.stopped.set()
