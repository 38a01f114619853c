"""Help pages."""

from fastapi import APIRouter, Request
from starlette.responses import Response

from app.routes.rendering import render

router = APIRouter()


@router.get("/help/keys", name="read_keyboard_help")
def read_keyboard_help(request: Request) -> Response:
    """The keyboard shortcuts of the worksheet and the actions page."""
    return render(request, "worksheet/keys.html", {})
