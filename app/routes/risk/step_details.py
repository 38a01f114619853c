"""A step's details: layer type, system, response time, SIL claim, typical value and basis."""

from fastapi import APIRouter, Request
from starlette.responses import Response

from app.routes.deps import SessionDep, read_page_edit, read_seen
from app.routes.rendering import is_htmx, render
from app.services.risk import step_details as service

router = APIRouter(prefix="/studies/{study_id}")
PAGE = "risk/step_details/form.html"


@router.get("/steps/{step_id}/details", name="read_step_details")
def read_step_details(
    request: Request, study_id: int, step_id: int, session: SessionDep
) -> Response:
    """The step's details form."""
    page = service.build_step_details_page(session=session, study_id=study_id, step_id=step_id)
    block = "details" if is_htmx(request) else None
    return render(request, PAGE, {"page": page}, block=block)


@router.post("/steps/{step_id}/details", name="update_step_details")
async def update_step_details(
    request: Request, study_id: int, step_id: int, session: SessionDep
) -> Response:
    """Save the fields changed; invalid fields answer 422 with the typed text kept, fields
    someone else saved since the form was loaded 409 with both values at the field."""
    posted = await request.form()
    page = service.save_step_details(
        session=session, study_id=study_id, step_id=step_id,
        form=service.StepDetailsForm.from_mapping(posted), edit=read_page_edit(posted),
        resolution=str(posted.get("resolution") or ""), seen=read_seen(posted))
    block = "details" if is_htmx(request) else None
    status = 422 if page.errors else 409 if page.conflicts else 200
    return render(request, PAGE, {"page": page}, block=block, status_code=status)
