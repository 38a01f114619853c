"""The study risk picture: ranking, sums, matrix, gap bars, SIL needs and check warnings."""

from typing import Annotated

from fastapi import APIRouter, Query, Request
from starlette.responses import Response

from app.routes.deps import SessionDep
from app.routes.rendering import render
from app.services.risk import stored_picture

router = APIRouter(prefix="/studies/{study_id}")
Start = Annotated[int, Query(ge=0, le=10_000_000)]


@router.get("/risk", name="read_risk_picture")
def read_risk_picture(
    request: Request, study_id: int, session: SessionDep, cell: str | None = None,
    credits: str | None = None, uncertain: str | None = None, ranked_from: Start = 0,
    cell_from: Start = 0, incomplete_from: Start = 0, unresolved_from: Start = 0,
    uncertain_from: Start = 0, needs_from: Start = 0, warnings_from: Start = 0,
) -> Response:
    """The risk picture; `?cell=cat-3:decade--4` lists one matrix cell's scenarios,
    `?credits=withdrawn` draws it with every credit an IPL check flags withdrawn and
    `?uncertain=likely` ranks the uncertain verdicts most likely to meet first; each long list
    shows 50 lines from `<list>_from` (ranked, cell, incomplete, unresolved, uncertain, needs,
    warnings)."""
    starts = {"ranked": ranked_from, "cell": cell_from, "incomplete": incomplete_from,
              "unresolved": unresolved_from, "uncertain": uncertain_from,
              "needs": needs_from, "warnings": warnings_from}
    page = stored_picture.read_stored_risk_page(
        session=session, study_id=study_id, cell=cell, withdrawn=credits == "withdrawn",
        most_likely_first=uncertain == "likely", starts=starts)
    status = 422 if page.cell_error else 200
    return render(request, "risk/picture.html", {"page": page}, status_code=status)
