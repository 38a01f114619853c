"""Study files in and out: the export page, each download, the file format's schema, import."""

from collections.abc import Iterator
from typing import Annotated

from fastapi import APIRouter, File, Request, UploadFile
from fastapi.responses import JSONResponse
from starlette.responses import RedirectResponse, Response, StreamingResponse

from app.archive import all_studies_archive
from app.routes.deps import SessionDep
from app.routes.rendering import render, templates
from app.services.exchange.exports import (
    ExportFormat,
    Piece,
    ReportTooLargeError,
    build_export,
    check_report_in_request,
    read_export_page,
    release_memory,
)
from app.services.exchange.study_file import StudyFileError
from app.services.exchange.study_import import import_study_upload, max_file_bytes
from app.services.exchange.study_schema import SCHEMA_PATH, SCHEMA_VERSION, study_json_schema
from app.services.study import listing as study_service

router = APIRouter()
ALL_STUDIES_FILENAME = "tallyroom-all-studies.zip"


@router.get("/export-all", name="read_export_all")
def read_export_all(request: Request, session: SessionDep) -> Response:
    """Every study in one archive, for moving to another machine: what it holds and how."""
    studies = study_service.list_studies(session=session)
    return render(request, "exchange/exports/all.html",
                  {"studies": studies, "filename": ALL_STUDIES_FILENAME})


@router.get("/export-all.zip", name="export_all_studies")
def export_all_studies(session: SessionDep) -> Response:
    """One zip with every study's study file (as `tallyroom export-all` writes it)."""
    content, _names = all_studies_archive(session)
    disposition = f'attachment; filename="{ALL_STUDIES_FILENAME}"'
    return Response(content, media_type="application/zip",
                    headers={"Content-Disposition": disposition})


@router.get("/studies/{study_id}/export", name="read_exports")
def read_exports(request: Request, study_id: int, session: SessionDep) -> Response:
    """The formats a study exports to, with download links and the command-line equivalent."""
    page = read_export_page(session=session, study_id=study_id)
    return render(request, "exchange/exports/index.html",
                  {"page": page, "study": page.study, "schema_version": SCHEMA_VERSION})


def _download(session: SessionDep, study_id: int, export_format: ExportFormat) -> Response:
    export = build_export(session=session, study_id=study_id, export_format=export_format,
                          env=templates.env)
    release_memory()  # what the study-sized pass held is garbage now; the file is ready
    disposition = f'attachment; filename="{export.filename}"'
    # A spreadsheet sits in a temporary file: sent in pieces, never read into memory whole;
    # the JSON study file is written as it is sent (the request's session stays open until
    # the response is done).
    return StreamingResponse(_then_release(export.chunks()), media_type=export.media_type,
                             headers={"Content-Disposition": disposition})


def _then_release(chunks: Iterator[Piece]) -> Iterator[Piece]:
    yield from chunks
    release_memory()  # what a file written while sent held


@router.get("/studies/{study_id}/export.xlsx", name="export_xlsx")
def export_xlsx(study_id: int, session: SessionDep) -> Response:
    """The study as an Excel workbook."""
    return _download(session, study_id, ExportFormat.XLSX)


@router.get("/studies/{study_id}/export.csv", name="export_csv")
def export_csv(study_id: int, session: SessionDep) -> Response:
    """The scenario table as UTF-8 CSV."""
    return _download(session, study_id, ExportFormat.CSV)


@router.get("/studies/{study_id}/export.json", name="export_json")
def export_json(study_id: int, session: SessionDep) -> Response:
    """The whole study as a versioned JSON study file."""
    return _download(session, study_id, ExportFormat.JSON)


@router.get("/studies/{study_id}/export.pdf", name="export_pdf")
def export_pdf(request: Request, study_id: int, session: SessionDep) -> Response:
    """The printable study report, built here for a study of up to REQUEST_REPORT_SCENARIOS;
    above that, the export page (409) saying so, with the background build on it."""
    try:
        check_report_in_request(session, study_id)
    except ReportTooLargeError as refusal:
        page = read_export_page(session=session, study_id=study_id)
        return render(request, "exchange/exports/index.html",
                      {"page": page, "study": page.study, "schema_version": SCHEMA_VERSION,
                       "report_notice": str(refusal)}, status_code=409)
    return _download(session, study_id, ExportFormat.PDF)


@router.get(SCHEMA_PATH, name="read_study_schema")
def read_study_schema() -> JSONResponse:
    """The JSON Schema of the study file, schema version 1."""
    return JSONResponse(study_json_schema(), media_type="application/schema+json")


@router.post("/studies/import", name="import_study")
def import_study(
    request: Request, session: SessionDep,
    study_file: Annotated[UploadFile | None, File()] = None,
) -> Response:
    """Create a study from an uploaded study file; refuse a bad file and write nothing."""
    raw = study_file.file.read(max_file_bytes() + 1) if study_file else b""
    try:
        study = import_study_upload(session=session, raw=raw)
    except StudyFileError as err:
        listing = study_service.list_studies(session=session)
        context = {"studies": listing, "import_error": f"Not imported: {err}"}
        return render(request, "study/list.html", context, status_code=422)
    return RedirectResponse(request.url_for("read_study", study_id=study.id), status_code=303)
