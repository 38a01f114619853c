"""The name this browser writes into the change log, asked once and kept in a cookie."""

from typing import Annotated
from urllib.parse import urlparse

from fastapi import APIRouter, Form
from starlette.responses import RedirectResponse

from app.routes.deps import AUTHOR_COOKIE, author_cookie_value

router = APIRouter()
ONE_YEAR_SECONDS = 365 * 24 * 3600


@router.post("/author", name="update_author")
def update_author(
    name: Annotated[str, Form(min_length=1, max_length=120)], next: Annotated[str, Form()] = "/"
) -> RedirectResponse:
    """Remember the name for this browser and go back where the form was."""
    # Only same-site paths: a crafted form must not bounce the user elsewhere.
    target = next if next.startswith("/") and not urlparse(next).netloc else "/"
    response = RedirectResponse(target, status_code=303)
    response.set_cookie(AUTHOR_COOKIE, author_cookie_value(name), max_age=ONE_YEAR_SECONDS,
                        samesite="lax")
    return response
