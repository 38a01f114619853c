"""What a session cookie holds, and who a request's session makes the person asking.

The cookie (signed, HttpOnly, SameSite=Strict) holds: `csrf` (the token every write must
carry), `sid` (a random id for this browser, for answers that belong to one person), `name`,
and after joining or signing in on the network `role`, `net`, `day` and `gen` (the session
generation it was stamped with; raising the generation ends it).
"""

import secrets
import unicodedata
from datetime import date

from starlette.requests import Request

from app.access.network import is_loopback
from app.access.roles import Access, Role
from app.db.models import AccessState
from app.settings import Settings

COOKIE = "tallyroom_session"
MAX_AGE_SECONDS = 30 * 24 * 3600
NAME_LIMIT = 120


def clean_name(typed: str) -> str:
    """A name as the change log shows it: control characters (NUL included) dropped, trimmed."""
    kept = "".join(ch for ch in typed if unicodedata.category(ch) != "Cc")
    return " ".join(kept.split())[:NAME_LIMIT]


def ensure_session(request: Request) -> dict[str, object]:
    """The session with its CSRF token and browser id, made on first need."""
    data = request.session
    if "csrf" not in data:
        data["csrf"] = secrets.token_urlsafe(32)
    if "sid" not in data:
        data["sid"] = secrets.token_urlsafe(16)
    return data


def _current(data: dict[str, object], generation: int) -> bool:
    return "gen" not in data or data["gen"] == generation


def _network_role(data: dict[str, object], today: date) -> Role | None:
    role = Role.from_label(data.get("role")) if data.get("net") is True else None
    # People who joined with the day's code are let in for that day only.
    if role is not None and role < Role.SCRIBE and data.get("day") != today.isoformat():
        return None
    return role


def resolve_access(request: Request, generation: int, settings: Settings) -> Access:
    """Who is asking (`generation`: the access state's session generation). On loopback the
    person at this computer is the facilitator."""
    data = request.session
    if not _current(data, generation):
        data.clear()
    name = str(data.get("name", ""))[:NAME_LIMIT]
    sid = str(data.get("sid", ""))
    if not settings.serves_network:
        client = request.client.host if request.client else None
        role = Role.FACILITATOR if is_loopback(client) else None
        return Access(role=role, name=name, session_id=sid, on_network=False)
    return Access(role=_network_role(data, date.today()), name=name, session_id=sid,
                  on_network=True)


def start_session(request: Request, *, role: Role, name: str, state: AccessState,
                  on_network: bool) -> None:
    """A fresh session for someone who just joined or signed in (new token, new id)."""
    data = request.session
    data.clear()
    data.update(csrf=secrets.token_urlsafe(32), sid=secrets.token_urlsafe(16),
                name=clean_name(name), role=role.label, net=on_network,
                day=date.today().isoformat(), gen=state.session_generation)


def remember_name(request: Request, name: str, state: AccessState) -> None:
    """The name this session writes into the change log."""
    data = ensure_session(request)
    data["name"] = clean_name(name)
    data["gen"] = state.session_generation


def restamp(request: Request, state: AccessState) -> None:
    """Keep this session alive across a generation change it made itself."""
    if request.session:
        request.session["gen"] = state.session_generation
