"""Risk criteria: the study's severity categories, their tolerable frequencies and basis."""

from fastapi import APIRouter, Request
from starlette.responses import RedirectResponse, Response

from app.routes.deps import SessionDep, read_page_edit, read_seen
from app.routes.rendering import render
from app.routes.urls import path_for
from app.services.risk import criteria as service

router = APIRouter(prefix="/studies/{study_id}")
PAGE = "risk/criteria/edit.html"


def _answer(request: Request, page: service.CriteriaPage) -> Response:
    has_errors = page.new_errors or page.basis_error or any(u.errors for u in page.categories)
    conflict = page.refusal or page.conflict or page.basis_conflict
    status = 422 if has_errors else 409 if conflict else 200
    return render(request, PAGE, {"page": page}, status_code=status)


@router.get("/criteria", name="read_criteria")
def read_criteria(request: Request, study_id: int, session: SessionDep,
                  added: int | None = None) -> Response:
    """The categories, how many scenarios each governs, and the criteria basis."""
    return _answer(request, service.build_criteria_page(session=session, study_id=study_id,
                                                        added_id=added))


@router.post("/criteria/basis", name="update_criteria_basis")
async def update_criteria_basis(request: Request, study_id: int, session: SessionDep) -> Response:
    """Say where the study's criteria come from (409 when someone saved another since)."""
    posted = await request.form()
    page = service.save_criteria_basis(session=session, study_id=study_id,
                                       text=str(posted.get("criteria_basis", "")),
                                       edit=read_page_edit(posted),
                                       resolution=str(posted.get("resolution") or ""),
                                       seen=read_seen(posted))
    return _answer(request, page)


@router.post("/criteria/categories", name="create_category")
async def create_category(request: Request, study_id: int, session: SessionDep) -> Response:
    """Add a severity category."""
    form = service.CategoryForm.from_mapping(await request.form())
    result = service.add_category(session=session, study_id=study_id, form=form)
    if isinstance(result, service.CriteriaPage):
        return _answer(request, result)
    url = path_for(request, "read_criteria", study_id=study_id)
    return RedirectResponse(f"{url}?added={result.id}", status_code=303)


@router.post("/criteria/categories/{category_id}", name="update_category")
async def update_category(
    request: Request, study_id: int, category_id: int, session: SessionDep
) -> Response:
    """Change a category and re-evaluate every scenario rated with it."""
    posted = await request.form()
    form = service.CategoryForm.from_mapping(posted)
    page = service.save_category(session=session, study_id=study_id,
                                 category_id=category_id, form=form,
                                 edit=read_page_edit(posted),
                                 resolution=str(posted.get("resolution") or ""),
                                 seen=read_seen(posted))
    return _answer(request, page)


@router.post("/criteria/categories/{category_id}/delete",
             name="delete_category")
def delete_category(
    request: Request, study_id: int, category_id: int, session: SessionDep
) -> Response:
    """Delete a category no scenario is rated with; otherwise refuse with the reason."""
    page = service.remove_category(session=session, study_id=study_id, category_id=category_id)
    return _answer(request, page)
