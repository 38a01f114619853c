"""The PDF report made in the background: start it, poll its progress, download it when ready."""

from typing import Annotated

from fastapi import APIRouter, Form, Request
from starlette.responses import RedirectResponse, Response

from app.routes.deps import SessionDep
from app.routes.rendering import is_htmx, render, templates
from app.services.exchange import report_jobs
from app.services.exchange.exports import report_filename
from app.services.exchange.report_summary import ReportKind
from app.services.study.tree import NotFoundError, get_study

router = APIRouter(prefix="/studies/{study_id}")


def _job_or_404(study_id: int, job_id: str) -> report_jobs.ReportJob:
    job = report_jobs.get_job(study_id, job_id)
    if job is None:
        raise NotFoundError("There is no such report job (a restart forgets them): start again.")
    return job


@router.post("/report-jobs", name="start_report_job")
def start_report_job(
    request: Request, study_id: int, session: SessionDep,
    revision_id: Annotated[int | None, Form()] = None,
    kind: Annotated[ReportKind, Form()] = ReportKind.FULL,
) -> Response:
    """Start the report, full or summary (of the working copy, or of a frozen revision), and
    show its progress."""
    filename = report_filename(session=session, study_id=study_id, revision_id=revision_id,
                               kind=kind)
    job = report_jobs.start_report_job(engine=session.get_bind(), env=templates.env,  # type: ignore[arg-type]
                                       study_id=study_id, revision_id=revision_id,
                                       filename=filename, kind=kind)
    if not is_htmx(request):
        return RedirectResponse(request.url_for("read_report_job", study_id=study_id,
                                                job_key=job.job_id), status_code=303)
    return render(request, "exchange/exports/report_job.html",
                  {"job": job, "study": get_study(session, study_id)}, block="report_job")


# `job_key`, not `…_id`: path parameters named `…_id` must be row ids (routes/deps.check_path_ids).
@router.get("/report-jobs/{job_key}", name="read_report_job")
def read_report_job(request: Request, study_id: int, job_key: str,
                    session: SessionDep) -> Response:
    """The job's progress (the fragment polls itself until the file is ready)."""
    job = _job_or_404(study_id, job_key)
    block = "report_job" if is_htmx(request) else None
    return render(request, "exchange/exports/report_job.html",
                  {"job": job, "study": get_study(session, study_id)}, block=block)


@router.get("/report-jobs/{job_key}/file", name="download_report_job")
def download_report_job(study_id: int, job_key: str) -> Response:
    """The finished PDF; 409 while it is still being made."""
    job = _job_or_404(study_id, job_key)
    if job.state is not report_jobs.JobState.READY:
        return Response(f"The report is not ready yet ({job.step}).", status_code=409,
                        media_type="text/plain; charset=utf-8")
    return Response(job.content, media_type="application/pdf",
                    headers={"Content-Disposition": f'attachment; filename="{job.filename}"'})
