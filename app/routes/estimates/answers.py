"""The participant's page: each open round's question, a large input, their own answer only.

Who answers comes from the session (`current_access`): the name given when joining and the
device's session id, so a device can change only the estimate it gave.
"""

from typing import Annotated

from fastapi import APIRouter, Form, Request
from starlette.responses import RedirectResponse, Response

from app.access.guard import current_access
from app.access.roles import Role, allow
from app.routes.deps import ID_BOUNDS, SessionDep
from app.routes.rendering import render
from app.routes.urls import path_for
from app.services.estimates import answers, views
from app.services.study.errors import FieldInputError

router = APIRouter(prefix="/studies/{study_id}")
TextForm = Annotated[str, Form(max_length=200)]
PAGE = "estimates/answer.html"


def _answerer(request: Request) -> answers.Answerer:
    access = current_access(request)
    if access is None:  # check_role runs before every route; this is only a type guard
        return answers.Answerer("", "")
    return answers.Answerer(access.name, access.session_id)


def _page(request: Request, session: SessionDep, study_id: int,
          error: FieldInputError | None = None, typed: str = "",
          round_id: int = 0) -> Response:
    found = views.participant_rounds(session=session, study_id=study_id,
                                     answerer=_answerer(request))
    context = {"found": found, "open_key": views.open_rounds_key(found), "study_id": study_id,
               "error": error, "typed": typed, "error_round": round_id,
               "person": _answerer(request).person}
    return render(request, PAGE, context, status_code=422 if error else 200)


@router.get("/estimate", name="read_estimate")
@allow(Role.PARTICIPANT)
def read_estimate(request: Request, study_id: int, session: SessionDep) -> Response:
    """The open round's question and this device's own estimate (never anyone else's)."""
    return _page(request, session, study_id)


@router.get("/estimate/live", name="read_estimate_live")
@allow(Role.PARTICIPANT)
def read_estimate_live(request: Request, study_id: int, session: SessionDep,
                       rounds: str = "0") -> Response:
    """204 while the same rounds are open; otherwise tell htmx to reload the page."""
    found = views.participant_rounds(session=session, study_id=study_id,
                                     answerer=_answerer(request))
    if views.open_rounds_key(found) == rounds:
        return Response(status_code=204)
    return Response(status_code=200, headers={"HX-Refresh": "true"})


@router.post("/estimate", name="submit_estimate")
@allow(Role.PARTICIPANT)
def submit_estimate(request: Request, study_id: int, session: SessionDep,
                    round_id: Annotated[int, Form(**ID_BOUNDS)] = 0,
                    value_text: TextForm = "") -> Response:
    """Save or change this device's estimate in the open round and read it back."""
    try:
        answers.give_estimate(session=session, study_id=study_id, round_id=round_id,
                              answerer=_answerer(request), text=value_text)
    except FieldInputError as error:
        return _page(request, session, study_id, error, value_text, round_id)
    return RedirectResponse(path_for(request, "read_estimate", study_id=study_id),
                            status_code=303)
