"""The PDF report built in the background: start (or join) a build, poll its progress, download
the file when it is ready."""

from pathlib import Path
from typing import Annotated

from fastapi import APIRouter, Form, Request
from starlette.responses import FileResponse, RedirectResponse, Response

from app.routes.deps import SessionDep
from app.routes.rendering import is_htmx, render
from app.services.exchange import report_jobs
from app.services.exchange.exports import report_filename
from app.services.exchange.report_summary import ReportKind
from app.services.study.tree import NotFoundError, get_study

router = APIRouter(prefix="/studies/{study_id}")


def _database_url(session: SessionDep) -> str:
    return session.get_bind().engine.url.render_as_string(hide_password=False)


def _folder(session: SessionDep) -> Path:
    return report_jobs.reports_folder(_database_url(session))


def _job_or_404(session: SessionDep, study_id: int, job_id: str) -> report_jobs.ReportJob:
    job = report_jobs.get_job(_folder(session), study_id, job_id)
    if job is None:
        raise NotFoundError("There is no such report build (finished builds are kept for a "
                            "day): build the report again.")
    return job


@router.post("/report-jobs", name="start_report_job")
def start_report_job(
    request: Request, study_id: int, session: SessionDep,
    revision_id: Annotated[int | None, Form()] = None,
    kind: Annotated[ReportKind, Form()] = ReportKind.FULL,
) -> Response:
    """Build the report, full or summary (of the working copy, or of a frozen revision), or
    join the build of the same report already running; show its progress."""
    filename = report_filename(session=session, study_id=study_id, revision_id=revision_id,
                               kind=kind)
    job = report_jobs.start_report_job(_folder(session), study_id=study_id,
                                       revision_id=revision_id, filename=filename, kind=kind,
                                       database_url=_database_url(session))
    if not is_htmx(request):
        return RedirectResponse(request.url_for("read_report_job", study_id=study_id,
                                                job_key=job.job_id), status_code=303)
    return render(request, "exchange/exports/report_job.html",
                  {"job": job, "study": get_study(session, study_id)}, block="report_job")


# `job_key`, not `…_id`: path parameters named `…_id` must be row ids (routes/deps.check_path_ids).
@router.get("/report-jobs/{job_key}", name="read_report_job")
def read_report_job(request: Request, study_id: int, job_key: str,
                    session: SessionDep) -> Response:
    """The build's progress (the fragment polls itself until the file is ready)."""
    job = _job_or_404(session, study_id, job_key)
    block = "report_job" if is_htmx(request) else None
    return render(request, "exchange/exports/report_job.html",
                  {"job": job, "study": get_study(session, study_id)}, block=block)


@router.get("/report-jobs/{job_key}/file", name="download_report_job")
def download_report_job(study_id: int, job_key: str, session: SessionDep) -> Response:
    """The finished PDF; 409 while it is still being built."""
    job = _job_or_404(session, study_id, job_key)
    if job.state is not report_jobs.JobState.READY:
        why = job.error if job.state is report_jobs.JobState.FAILED else (
            f"The report is not ready yet ({job.progress}).")
        return Response(why, status_code=409, media_type="text/plain; charset=utf-8")
    path = report_jobs.pdf_path(_folder(session), job.job_id)
    if not path.is_file():
        raise NotFoundError("This report's file has been cleared away: build the report again.")
    return FileResponse(path, media_type="application/pdf", filename=job.filename)
