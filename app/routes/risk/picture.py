"""The study risk picture: ranking, sums, matrix, gap bars, SIL needs and check warnings."""

from fastapi import APIRouter, Request
from starlette.responses import Response

from app.routes.deps import SessionDep
from app.routes.rendering import render
from app.services.risk import picture as risk_picture

router = APIRouter(prefix="/studies/{study_id}")


@router.get("/risk", name="read_risk_picture")
def read_risk_picture(
    request: Request, study_id: int, session: SessionDep, cell: str | None = None,
    credits: str | None = None, uncertain: str | None = None,
) -> Response:
    """The risk picture; `?cell=cat-3:decade--4` lists one matrix cell's scenarios,
    `?credits=withdrawn` draws it with every credit an IPL check flags withdrawn and
    `?uncertain=likely` ranks the uncertain verdicts most likely to meet first."""
    page = risk_picture.read_risk_page(session=session, study_id=study_id, cell=cell,
                                       withdrawn=credits == "withdrawn",
                                       most_likely_first=uncertain == "likely")
    status = 422 if page.cell_error else 200
    return render(request, "risk/picture.html", {"page": page}, status_code=status)
