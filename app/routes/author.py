"""The name this browser writes into the change log, asked once and kept in its session."""

from typing import Annotated

from fastapi import APIRouter, Form, Request
from starlette.responses import RedirectResponse

from app.access.redirects import same_site_path
from app.access.sessions import remember_name
from app.access.state import load_state
from app.routes.deps import SessionDep

router = APIRouter()


@router.post("/author", name="update_author")
def update_author(
    request: Request, session: SessionDep,
    name: Annotated[str, Form(min_length=1, max_length=120)], next: Annotated[str, Form()] = "/"
) -> RedirectResponse:
    """Remember the name in this browser's session and go back where the form was."""
    remember_name(request, name, load_state(session))
    return RedirectResponse(same_site_path(next), status_code=303)
