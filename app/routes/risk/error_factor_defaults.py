"""The study's default error factor per step kind (facilitator or scribe; redirect after post)."""

from fastapi import APIRouter, Request
from starlette.responses import RedirectResponse, Response

from app.routes.deps import SessionDep, read_page_edit
from app.routes.rendering import render
from app.routes.urls import path_for
from app.services.risk import error_factor_defaults as service

router = APIRouter(prefix="/studies/{study_id}")
PAGE = "risk/error_factor_defaults.html"


@router.get("/error-factors", name="read_error_factor_defaults")
def read_error_factor_defaults(request: Request, study_id: int, session: SessionDep,
                               saved: int = 0) -> Response:
    """The form with the study's defaults and how the EF of a step is chosen."""
    page = service.build_defaults_page(session=session, study_id=study_id, saved=saved == 1)
    return render(request, PAGE, {"page": page})


@router.post("/error-factors", name="update_error_factor_defaults")
async def update_error_factor_defaults(request: Request, study_id: int,
                                       session: SessionDep) -> Response:
    """Save the defaults; 422 with the typed text kept, 409 on a stale page, else redirect."""
    form = await request.form()
    page = service.save_defaults(session=session, study_id=study_id, form=form,
                                 version=read_page_edit(form).version)
    if page.saved:
        url = path_for(request, "read_error_factor_defaults", study_id=study_id)
        return RedirectResponse(f"{url}?saved=1", status_code=303)
    return render(request, PAGE, {"page": page}, status_code=422 if page.errors else 409)
