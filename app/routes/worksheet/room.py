"""The room view for the projector, its change poll, and the scribe's focus."""

from typing import Annotated

from fastapi import APIRouter, Form, Request
from starlette.responses import Response

from app.access.roles import Role, allow
from app.routes.deps import ID_BOUNDS, SessionDep
from app.routes.estimates.join import join_panel
from app.routes.rendering import render
from app.services.estimates import views as rounds_view
from app.services.worksheet import room as room_service
from app.settings import get_settings

router = APIRouter(prefix="/studies/{study_id}")


def _context(request: Request, session: SessionDep, study_id: int) -> dict[str, object]:
    room = room_service.build_room_view(session=session, study_id=study_id)
    return {"room": room, "study": room.study, "poll": get_settings().room_poll_seconds,
            "stamp": room.stamp,
            "rounds": rounds_view.room_rounds(session=session, study_id=study_id),
            "join": join_panel(request, session, study_id)}


@router.get("/room", name="read_room")
@allow(Role.VIEWER)
def read_room(request: Request, study_id: int, session: SessionDep) -> Response:
    """Read-only, large-type view of the scenario the scribe is working on."""
    return render(request, "worksheet/room.html", _context(request, session, study_id))


@router.get("/room/live", name="read_room_live")
@allow(Role.VIEWER)
def read_room_live(request: Request, study_id: int, session: SessionDep,
                   stamp: str = "") -> Response:
    """204 while nothing changed since `stamp`; the room's live region once something did."""
    if room_service.live_stamp(session=session, study_id=study_id) == stamp:
        return Response(status_code=204)
    return render(request, "worksheet/room.html", _context(request, session, study_id),
                  block="live")


@router.post("/focus", name="update_focus")
def update_focus(study_id: int, scenario_id: Annotated[int, Form(**ID_BOUNDS)],
                 session: SessionDep) -> Response:
    """The scribe moved to a scenario: the room view follows (no change-log entry)."""
    room_service.set_focus(session=session, study_id=study_id, scenario_id=scenario_id)
    return Response(status_code=204)
