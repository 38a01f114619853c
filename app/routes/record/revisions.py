"""Revisions: freeze a signed-off snapshot, view one read-only, compare two versions."""

from typing import Annotated

from fastapi import APIRouter, Form, Query, Request
from starlette.responses import RedirectResponse, Response

from app.routes.deps import AuthorDep, SessionDep
from app.routes.rendering import is_htmx, render
from app.services.record import revisions as revision_service
from app.services.record.revisions import RevisionInputError

router = APIRouter(prefix="/studies/{study_id}")
TextForm = Annotated[str, Form()]


@router.get("/revisions", name="read_revisions")
def read_revisions(request: Request, study_id: int, session: SessionDep,
                   author: AuthorDep) -> Response:
    """The study's revisions and the form to freeze a new one."""
    page = revision_service.list_revisions(session=session, study_id=study_id)
    form = {"values": {"signed_off_by": author}}
    return render(request, "record/revisions/list.html", {"page": page, "form": form})


@router.post("/revisions", name="create_revision")
def create_revision(request: Request, study_id: int, session: SessionDep, author: AuthorDep,
                    label: TextForm = "", note: TextForm = "",
                    signed_off_by: TextForm = "") -> Response:
    """Freeze the study as it is now under a unique label, signed off by a named person."""
    values = {"label": label, "note": note, "signed_off_by": signed_off_by}
    try:
        revision = revision_service.freeze_revision(session=session, study_id=study_id,
                                                    values=values, frozen_by=author)
    except RevisionInputError as error:
        page = revision_service.list_revisions(session=session, study_id=study_id)
        form = {"values": values, "field": error.field, "error": error.message}
        block = "freeze_form" if is_htmx(request) else None
        return render(request, "record/revisions/list.html", {"page": page, "form": form},
                      block=block, status_code=422)
    url = request.url_for("read_revision", study_id=study_id, revision_id=revision.id)
    response: Response = RedirectResponse(url, status_code=303)
    if is_htmx(request):
        response = Response(status_code=200, headers={"HX-Redirect": str(url)})
    return response


@router.get("/revisions/compare", name="compare_revisions")
def compare_revisions(
    request: Request, study_id: int, session: SessionDep,
    typed_from: Annotated[str, Query(alias="from")] = "",
    typed_to: Annotated[str, Query(alias="to")] = "live",
) -> Response:
    """What changed from one revision to another revision or to the live study."""
    status_code = 200
    try:
        page = revision_service.build_comparison_page(session=session, study_id=study_id,
                                                  typed_from=typed_from, typed_to=typed_to)
    except RevisionInputError as error:
        page = revision_service.invalid_compare_page(
            session=session, study_id=study_id, typed_from=typed_from, typed_to=typed_to,
            error=error)
        status_code = 422
    return render(request, "record/revisions/compare.html", {"page": page}, status_code=status_code)


@router.get("/revisions/{revision_id}", name="read_revision")
def read_revision(request: Request, study_id: int, revision_id: int,
                  session: SessionDep) -> Response:
    """One frozen revision, read-only, with its numbers as they stood."""
    page = revision_service.read_frozen(session=session, study_id=study_id,
                                        revision_id=revision_id)
    return render(request, "record/revisions/detail.html", {"page": page})
