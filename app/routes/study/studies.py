"""Studies: the list and one study's overview."""

from fastapi import APIRouter, Request
from starlette.responses import Response

from app.routes.deps import SessionDep
from app.routes.rendering import render
from app.services.study import listing as study_service

router = APIRouter()


@router.get("/", name="read_studies")
def read_studies(request: Request, session: SessionDep) -> Response:
    """The list of studies."""
    listing = study_service.list_studies(session=session)
    return render(request, "study/list.html", {"studies": listing})


@router.get("/studies/{study_id}", name="read_study")
def read_study(request: Request, study_id: int, session: SessionDep) -> Response:
    """One study: its nodes and every scenario's frequency, target and gap."""
    overview = study_service.read_study_overview(session=session, study_id=study_id)
    return render(request, "study/detail.html", {"page": overview})
