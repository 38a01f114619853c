"""The room view's join panel: the day's code in large type and a QR code of the join address.

Shown only when Tallyroom serves the meeting-room network (on loopback nobody else can join).
"""

from dataclasses import dataclass
from urllib.parse import quote

from fastapi import APIRouter, Request
from sqlmodel import Session
from starlette.responses import Response

from app.access.codes import show_code
from app.access.network import join_address
from app.access.roles import Role, allow
from app.access.state import todays_join_code
from app.routes.deps import SessionDep
from app.routes.urls import path_for
from app.services.estimates.join_qr import qr_svg
from app.services.study.tree import get_study
from app.settings import Settings

router = APIRouter(prefix="/studies/{study_id}")


@dataclass(frozen=True)
class JoinPanel:
    """What the room view shows so people can join: the code and the address to open."""

    code: str
    address: str


def join_panel(request: Request, session: Session, study_id: int) -> JoinPanel | None:
    """The panel, or None when the app does not serve the network."""
    settings: Settings = request.app.state.settings
    if not settings.serves_network:
        return None
    answer_page = path_for(request, "read_estimate", study_id=study_id)
    address = f"{join_address(settings)}?next={quote(answer_page, safe='')}"
    return JoinPanel(show_code(todays_join_code(session)), address)


@router.get("/room/join.svg", name="read_join_qr")
@allow(Role.VIEWER)
def read_join_qr(request: Request, study_id: int, session: SessionDep) -> Response:
    """The QR code of the join address (404 when not serving the network)."""
    get_study(session, study_id)
    panel = join_panel(request, session, study_id)
    if panel is None:
        return Response(status_code=404)
    return Response(qr_svg(panel.address), media_type="image/svg+xml",
                    headers={"Cache-Control": "no-store"})
