"""The proof-test calculator for a safety instrumented function, attachable to an IPL step."""

from typing import Annotated

from fastapi import APIRouter, Query, Request
from starlette.responses import RedirectResponse, Response

from app.db.ids import read_row_id
from app.routes.deps import ID_BOUNDS, SessionDep, read_page_edit, read_seen
from app.routes.rendering import is_htmx, render
from app.services.risk import proof_test as service
from app.services.risk.proof_test_form import ProofTestForm

router = APIRouter(prefix="/studies/{study_id}")
PAGE = "risk/proof_test/calculator.html"


@router.get("/proof-test", name="read_proof_test")
def read_proof_test(
    request: Request, study_id: int, session: SessionDep,
    step_id: Annotated[int | None, Query(**ID_BOUNDS)] = None, applied: bool = False,
) -> Response:
    """The calculator, with an attached IPL step's stored inputs and target when given."""
    page = service.read_calculator(
        session=session, study_id=study_id, step_id=step_id, applied=applied
    )
    return render(request, PAGE, {"page": page})


@router.post("/proof-test", name="calculate_proof_test")
async def calculate_proof_test(request: Request, study_id: int, session: SessionDep) -> Response:
    """PFDavg and the longest interval for the typed inputs; bad input answers 422 at the field."""
    data = await request.form()
    page = service.calculate_page(session=session, study_id=study_id,
                                  form=ProofTestForm.from_mapping(data),
                                  step_id=read_row_id(data.get("step_id")),
                                  edit=read_page_edit(data))
    blocks = ["result", "field_errors"] if is_htmx(request) else None
    return render(request, PAGE, {"page": page}, blocks=blocks,
                  status_code=422 if page.errors else 200)


@router.post("/proof-test/apply", name="apply_proof_test")
async def apply_proof_test(request: Request, study_id: int, session: SessionDep) -> Response:
    """Use the computed PFDavg for the attached IPL step, its inputs kept as the basis (409
    with both values when someone saved the step's PFD since the calculator was opened)."""
    data = await request.form()
    page = service.apply_to_step(session=session, study_id=study_id,
                                 step_id=read_row_id(data.get("step_id")) or 0,
                                 form=ProofTestForm.from_mapping(data),
                                 edit=read_page_edit(data),
                                 resolution=str(data.get("resolution") or ""),
                                 seen=read_seen(data))
    if page.errors or page.conflicts:
        return render(request, PAGE, {"page": page}, status_code=422 if page.errors else 409)
    target = request.url_for("read_proof_test", study_id=study_id).include_query_params(
        step_id=page.place.step.id if page.place else "",
        applied="false" if page.kept_theirs else "true")
    return RedirectResponse(str(target), status_code=303)
