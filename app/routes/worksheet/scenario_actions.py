"""Recommendations added from the worksheet, linked to the scenario they address."""

from typing import Annotated

from fastapi import APIRouter, Form, Request
from starlette.responses import RedirectResponse, Response

from app.routes.deps import SessionDep
from app.routes.rendering import is_htmx
from app.routes.urls import worksheet_url
from app.routes.worksheet.page import render_worksheet
from app.services.record.action_inputs import ActionInputError
from app.services.record.actions import add_action
from app.services.worksheet.structure import get_row, kind_of, node_id_of

router = APIRouter(prefix="/studies/{study_id}")


@router.post("/scenarios/{scenario_id}/recommendations",
             name="create_scenario_recommendation")
def create_scenario_recommendation(
    request: Request, study_id: int, scenario_id: int, session: SessionDep,
    text: Annotated[str, Form()] = "",
) -> Response:
    """Add a recommendation for this scenario; the add box keeps focus for the next one."""
    scenario = get_row(session, kind_of("scenario"), study_id, scenario_id)
    node_id = node_id_of(session, "scenario", scenario)
    focus = f"add-rec-{scenario_id}"
    try:
        add_action(session=session, study_id=study_id, text=text, scenario_ids=[scenario_id])
    except ActionInputError as err:
        block = "worksheet" if is_htmx(request) else None
        return render_worksheet(request, session, study_id, node_id, block=block,
                                status_code=422, notice=err.message, focus_id=focus)
    if is_htmx(request):
        return render_worksheet(request, session, study_id, node_id, block="worksheet",
                                focus_id=focus)
    return RedirectResponse(worksheet_url(request, study_id, node_id, f"scenario-{scenario_id}"),
                            status_code=303)
