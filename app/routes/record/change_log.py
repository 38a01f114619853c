"""The change log in words: filter by date range, node, scenario and person; download as CSV."""

from typing import Annotated

from fastapi import APIRouter, Query, Request
from starlette.responses import Response

from app.routes.deps import SessionDep
from app.routes.rendering import CAUTIONS, is_htmx, render
from app.services.record import change_log as log_service

router = APIRouter(prefix="/studies/{study_id}")

Since = Annotated[str, Query(alias="from")]
Until = Annotated[str, Query(alias="to")]


@router.get("/changes", name="read_change_log")
def read_change_log(
    request: Request, study_id: int, session: SessionDep, since: Since = "", until: Until = "",
    scenario_id: str = "", node_id: str = "", who: str = "",
) -> Response:
    """The study's changes, newest first; a filter that cannot be read answers 422."""
    typed = log_service.FilterText(since, until, scenario_id, node_id, who)
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


@router.get("/changes.csv", name="export_change_log")
def export_change_log(
    study_id: int, session: SessionDep, since: Since = "", until: Until = "",
    scenario_id: str = "", node_id: str = "", who: str = "",
) -> Response:
    """Every change the filter matches, in words, as CSV; an unreadable filter answers 422."""
    typed = log_service.FilterText(since, until, scenario_id, node_id, who)
    try:
        content = log_service.change_log_csv(session=session, study_id=study_id, typed=typed,
                                             cautions=CAUTIONS)
    except log_service.ChangeLogFilterError as error:
        return Response(f"Not exported: {error.message}", status_code=422,
                        media_type="text/plain; charset=utf-8")
    return Response(content, media_type="text/csv; charset=utf-8", headers={
        "Content-Disposition": f'attachment; filename="tallyroom-{study_id}-changes.csv"'})
