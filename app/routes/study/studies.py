"""Studies: the list, one study's overview, and a study's own life (new, edit, copy, delete)."""

from dataclasses import replace
from typing import Annotated

from fastapi import APIRouter, Query, Request
from starlette.responses import RedirectResponse, Response

from app.access.roles import Role, allow
from app.routes.deps import SessionDep, read_page_edit, read_seen
from app.routes.rendering import is_htmx, render
from app.routes.urls import path_for
from app.services.exchange.study_import import duplicate_study as copy_whole_study
from app.services.study import lifecycle
from app.services.study import listing as study_service
from app.services.study import overview as overview_service
from app.services.study.conflicts import ConflictError

router = APIRouter()
FORM_PAGE = "study/form.html"


@router.get("/", name="read_studies")
def read_studies(request: Request, session: SessionDep) -> Response:
    """The list of studies."""
    listing = study_service.list_studies(session=session)
    return render(request, "study/list.html", {"studies": listing})


def _study_form(request: Request, session: SessionDep, form: lifecycle.StudyForm, *,
                study_id: int | None = None, errors: dict[str, str] | None = None,
                loaded: lifecycle.LoadedHeading | None = None) -> Response:
    """The new-study or edit-study form, with each field's problem beside it (and, editing,
    the version and fields it was loaded with; after a conflict the other person's values)."""
    context = {"form": form, "errors": errors or {}, "study_id": study_id, "loaded": loaded,
               "sources": study_service.list_studies(session=session)}
    status = 422 if errors else 409 if loaded and loaded.conflicts else 200
    return render(request, FORM_PAGE, context, status_code=status)


@router.get("/studies/new", name="new_study")
def new_study(request: Request, session: SessionDep) -> Response:
    """An empty new-study form."""
    return _study_form(request, session, lifecycle.StudyForm())


@router.post("/studies", name="create_study")
async def create_study(request: Request, session: SessionDep) -> Response:
    """Create a study and open its (empty) worksheet, where the first node is added."""
    form = lifecycle.StudyForm.from_mapping(await request.form())
    try:
        study = lifecycle.create_study(session=session, form=form)
    except lifecycle.StudyFormError as err:
        return _study_form(request, session, form, errors=err.errors)
    return RedirectResponse(path_for(request, "read_first_worksheet", study_id=study.id),
                            status_code=303)


@router.get("/studies/{study_id}", name="read_study")
def read_study(request: Request, study_id: int, session: SessionDep) -> Response:
    """One study: its nodes and every scenario's frequency, target and gap."""
    overview = overview_service.read_study_overview(session=session, study_id=study_id)
    return render(request, "study/detail.html",
                  {"page": overview, "lines_page": overview_service.LINES_PAGE})


@router.get("/studies/{study_id}/nodes/{node_id}/lines", name="read_node_lines")
def read_lines_of_node(request: Request, study_id: int, node_id: int, session: SessionDep,
                       lines_from: Annotated[int, Query(ge=0, le=10_000_000)] = 0) -> Response:
    """One node's scenario lines, 100 from `lines_from`: the overview of a large study opens
    them here (htmx swaps in the lines alone; without JavaScript it is a page of its own)."""
    page = overview_service.read_node_lines(session=session, study_id=study_id,
                                            node_id=node_id, start=lines_from)
    return render(request, "study/node_lines.html", {"page": page},
                  block="lines" if is_htmx(request) else None)


@router.get("/studies/{study_id}/edit", name="edit_study")
def edit_study(request: Request, study_id: int, session: SessionDep) -> Response:
    """The study's title, facility, scope and revision label, ready to change."""
    study = lifecycle.study_contents(session=session, study_id=study_id).study
    form = lifecycle.StudyForm.from_study(study)
    return _study_form(request, session, form, study_id=study_id,
                       loaded=lifecycle.LoadedHeading(study.version, form))


@router.post("/studies/{study_id}/edit", name="update_study")
async def update_study(request: Request, study_id: int, session: SessionDep) -> Response:
    """Save the heading fields changed and go back to the overview (409 with both values when
    someone saved the same field since the form was loaded)."""
    posted = await request.form()
    form, edit = lifecycle.StudyForm.from_mapping(posted), read_page_edit(posted)
    loaded = lifecycle.LoadedHeading(edit.version, lifecycle.StudyForm.from_mapping(edit.originals))
    try:
        lifecycle.update_study(session=session, study_id=study_id, form=form, edit=edit,
                               resolution=str(posted.get("resolution") or ""),
                               seen=read_seen(posted))
    except lifecycle.StudyFormError as err:
        return _study_form(request, session, form, study_id=study_id, errors=err.errors,
                           loaded=loaded)
    except ConflictError as err:
        return _study_form(request, session, form, study_id=study_id,
                           loaded=replace(loaded, conflicts=err.conflicts))
    return RedirectResponse(path_for(request, "read_study", study_id=study_id), status_code=303)


@router.post("/studies/{study_id}/duplicate", name="duplicate_study")
def duplicate_study(request: Request, study_id: int, session: SessionDep) -> Response:
    """Copy the whole study under a new title and open the copy."""
    copy = copy_whole_study(session=session, study_id=study_id)
    return RedirectResponse(path_for(request, "read_study", study_id=copy.id), status_code=303)


@router.get("/studies/{study_id}/delete", name="read_study_delete")
@allow(Role.FACILITATOR)
def read_study_delete(request: Request, study_id: int, session: SessionDep) -> Response:
    """Ask before deleting, naming everything that goes with the study."""
    contents = lifecycle.study_contents(session=session, study_id=study_id)
    return render(request, "study/confirm_delete.html", {"contents": contents})


@router.post("/studies/{study_id}/delete", name="delete_study")
@allow(Role.FACILITATOR)
def delete_study(request: Request, study_id: int, session: SessionDep) -> Response:
    """Delete the study and everything in it (this cannot be undone; export first)."""
    lifecycle.delete_study(session=session, study_id=study_id)
    return RedirectResponse(path_for(request, "read_studies"), status_code=303)
