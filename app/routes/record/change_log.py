"""The change log: who changed what, when, filterable by date range and scenario."""

from typing import Annotated

from fastapi import APIRouter, Query, Request
from starlette.responses import Response

from app.routes.deps import SessionDep
from app.routes.rendering import is_htmx, render
from app.services.record import change_log as log_service

router = APIRouter(prefix="/studies/{study_id}")


@router.get("/changes", name="read_change_log")
def read_change_log(
    request: Request, study_id: int, session: SessionDep,
    since: Annotated[str, Query(alias="from")] = "",
    until: Annotated[str, Query(alias="to")] = "",
    scenario_id: str = "",
) -> Response:
    """The study's changes, newest first; a filter that cannot be read answers 422."""
    typed = log_service.FilterText(since, until, scenario_id)
    status_code = 200
    try:
        page = log_service.build_change_log_page(session=session, study_id=study_id, typed=typed)
    except log_service.ChangeLogFilterError as error:
        page = log_service.invalid_filter_page(session=session, study_id=study_id, typed=typed,
                                               error=error)
        status_code = 422
    block = "change_log_section" if is_htmx(request) else None
    return render(request, "record/change_log/list.html", {"page": page}, block=block,
                  status_code=status_code)
