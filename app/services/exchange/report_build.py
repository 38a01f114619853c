"""The build a report job's worker process runs: read the study, lay the report out part by
part into the job's PDF, and keep the job's state file saying how far it is."""

import os
import resource
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


def peak_memory_mb() -> float:
    """The build's peak resident memory, in MB, at most: this process's peak plus, for each
    layout process, the largest peak any of them reached (Linux reports ru_maxrss in KB)."""
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return (own + LAYOUT_WORKERS * children) / 1024


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

    try:
        with Session(engine) as session:
            pages = write_report_pdf(session, job.study_id, scratch, env=env,
                                     when=datetime.fromisoformat(job.started_at),
                                     revision_id=job.revision_id, kind=job.kind,
                                     progress=progress, workers=LAYOUT_WORKERS)
        os.replace(scratch, target)
        update_job(folder, job_id, state=JobState.READY, step="ready", pages=pages,
                   peak_mb=round(peak_memory_mb(), 1))
    except Exception as error:  # any failure is told to the user, never a 500
        scratch.unlink(missing_ok=True)
        update_job(folder, job_id, state=JobState.FAILED, peak_mb=round(peak_memory_mb(), 1),
                   error=f"The report could not be built: {error}")
