"""The two checks every route runs first (app-wide FastAPI dependencies).

1. `refuse_cross_site_writes`: a POST/PUT/PATCH/DELETE from another site or origin, or
   without this session's token, is refused with 403 before the route or its database
   session runs, so nothing changes.
2. `check_role`: finds who is asking (`request.state.access`) and compares their role with
   the route's declared minimum (app/access/roles.py). It reads the access state through the
   request's one database session (`app.db.session.get_session`, which the route's
   `SessionDep` receives too: FastAPI makes a dependency once per request) and stamps it
   with the author's name for the change log.
"""

from typing import Annotated

from fastapi import Depends, HTTPException, Request
from sqlmodel import Session

from app.access.csrf import SAFE_METHODS, is_cross_site, sent_token, token_matches
from app.access.roles import Access, minimum_role
from app.access.sessions import resolve_access
from app.access.state import session_generation
from app.db.session import get_session
from app.db.tracking import AUTHOR_KEY
from app.settings import Settings

CROSS_SITE = ("Refused: this change was sent from another site or a file, not from a "
              "Tallyroom page. Nothing was changed.")
NO_TOKEN = ("Refused: the page's security token is missing or out of date (after signing in "
            "again or a restart). Reload the page and try again; nothing was changed.")


class SignInNeeded(Exception):
    """The route needs a role and this session has none yet."""


async def refuse_cross_site_writes(request: Request) -> None:
    """403 for a cross-site write or a write without this session's token."""
    if request.method in SAFE_METHODS:
        return
    if is_cross_site(request):
        raise HTTPException(403, CROSS_SITE)
    if not token_matches(request, await sent_token(request)):
        raise HTTPException(403, NO_TOKEN)


def check_role(request: Request, db: Annotated[Session, Depends(get_session)]) -> None:
    """Record who is asking; refuse a route their role does not reach."""
    settings: Settings = request.app.state.settings
    access = resolve_access(request, session_generation(db), settings)
    request.state.access = access
    db.info[AUTHOR_KEY] = access.name
    minimum = minimum_role(request.scope.get("endpoint"))
    if minimum is None or access.may(minimum):
        return
    if access.role is None:
        raise SignInNeeded()
    raise HTTPException(403, f"Your role ({access.role.label}) cannot open this page or make "
                             "this change. Ask the facilitator if you need more.")


def current_access(request: Request) -> Access | None:
    """Who is asking, once `check_role` has run for this request (None before)."""
    access = getattr(request.state, "access", None)
    return access if isinstance(access, Access) else None
