"""Joining with the day's code, signing in with the passphrase, and the access settings."""

from typing import Annotated

from fastapi import APIRouter, Form, Request
from starlette.responses import RedirectResponse, Response

from app.access import state as access_state
from app.access.codes import show_code
from app.access.network import join_address
from app.access.ratelimit import FailureLimiter
from app.access.redirects import same_site_path
from app.access.roles import Role, allow
from app.access.sessions import clean_name, restamp, start_session
from app.routes.deps import SessionDep
from app.routes.rendering import render
from app.services.study import listing as study_service
from app.settings import Settings

router = APIRouter()
NameField = Annotated[str, Form(max_length=120)]
NextField = Annotated[str, Form(max_length=2000)]
JOIN_ROLES = (Role.PARTICIPANT, Role.VIEWER)
SIGN_IN_ROLES = (Role.FACILITATOR, Role.SCRIBE)


def _settings(request: Request) -> Settings:
    settings: Settings = request.app.state.settings
    return settings


def _limiter(request: Request) -> FailureLimiter:
    limiter: FailureLimiter = request.app.state.join_limiter
    return limiter


def _address(request: Request) -> str:
    return request.client.host if request.client else "unknown"


def _form_page(request: Request, template: str, form: dict[str, str], error: str,
               status_code: int, retry_after: int = 0) -> Response:
    response = render(request, template, {"form": form, "error": error},
                      status_code=status_code)
    if retry_after:
        response.headers["Retry-After"] = str(retry_after)
    return response


def _too_many(request: Request, template: str, form: dict[str, str]) -> Response | None:
    wait = _limiter(request).wait_seconds(_address(request))
    if not wait:
        return None
    message = (f"Too many wrong attempts from this device: wait {wait} s and try again "
               f"(at most {_limiter(request).max_failures} a minute).")
    return _form_page(request, template, form, message, 429, retry_after=wait)


def _admit(request: Request, session: SessionDep, template: str, form: dict[str, str],
           chosen: Role, *, secret_ok: bool, wrong_secret: str, landing: str) -> Response:
    """The last step of joining and of signing in: a wrong code or passphrase counts against
    this device and is refused; the right one starts the session and goes on to `form["next"]`
    (a path on this site) or `landing`."""
    if not secret_ok:
        _limiter(request).record_failure(_address(request))
        return _form_page(request, template, form, wrong_secret, 422)
    start_session(request, role=chosen, name=form["name"], state=access_state.load_state(session),
                  on_network=_settings(request).serves_network)
    return RedirectResponse(same_site_path(form["next"], landing), status_code=303)


@router.get("/join", name="read_join")
@allow(None)
def read_join(request: Request, next: str = "") -> Response:
    """The join form: the day's code, a name and how to take part."""
    form = {"next": same_site_path(next, ""), "role": Role.PARTICIPANT.label}
    return render(request, "access/join.html", {"form": form, "error": ""})


@router.post("/join", name="join_room")
@allow(None)
def join_room(request: Request, session: SessionDep, code: Annotated[str, Form(max_length=40)],
              name: NameField = "", role: Annotated[str, Form(max_length=20)] = "participant",
              next: NextField = "") -> Response:
    """Join with today's code as a participant (a name is needed) or a viewer."""
    form = {"name": name, "role": role, "next": same_site_path(next, "")}
    refused = _too_many(request, "access/join.html", form)
    if refused:
        return refused
    chosen = Role.from_label(role)
    if chosen not in JOIN_ROLES or chosen is None:
        return _form_page(request, "access/join.html", form, "Choose participant or viewer.", 422)
    if chosen is Role.PARTICIPANT and not clean_name(name):
        return _form_page(request, "access/join.html", form,
                          "A participant gives a name: it shows beside their answers.", 422)
    return _admit(request, session, "access/join.html", form, chosen,
                  secret_ok=access_state.code_matches(session, code), landing="/rooms",
                  wrong_secret="That is not today's join code: check the code on the room screen.")


@router.get("/sign-in", name="read_sign_in")
@allow(None)
def read_sign_in(request: Request, next: str = "") -> Response:
    """The editors' sign-in form: the facilitator passphrase and a name."""
    form = {"next": same_site_path(next, ""), "role": Role.SCRIBE.label}
    return render(request, "access/sign_in.html", {"form": form, "error": ""})


@router.post("/sign-in", name="sign_in")
@allow(None)
def sign_in(request: Request, session: SessionDep,
            passphrase: Annotated[str, Form(max_length=1000)], name: NameField = "",
            role: Annotated[str, Form(max_length=20)] = "scribe",
            next: NextField = "") -> Response:
    """Sign in as facilitator or scribe with the passphrase; the name signs the change log."""
    form = {"name": name, "role": role, "next": same_site_path(next, "")}
    refused = _too_many(request, "access/sign_in.html", form)
    if refused:
        return refused
    chosen = Role.from_label(role)
    if chosen not in SIGN_IN_ROLES or chosen is None or not clean_name(name):
        return _form_page(request, "access/sign_in.html", form,
                          "Give your name and choose facilitator or scribe.", 422)
    return _admit(request, session, "access/sign_in.html", form, chosen,
                  secret_ok=access_state.passphrase_matches(session, passphrase), landing="/",
                  wrong_secret="That is not the facilitator passphrase.")


@router.post("/sign-out", name="sign_out")
@allow(None)
def sign_out(request: Request) -> Response:
    """Forget this browser's session."""
    request.session.clear()
    return RedirectResponse("/join", status_code=303)


@router.get("/rooms", name="read_rooms")
@allow(Role.VIEWER)
def read_rooms(request: Request, session: SessionDep) -> Response:
    """Where people who joined choose a study's room view."""
    studies = study_service.list_studies(session=session)
    return render(request, "access/rooms.html", {"studies": studies})


@router.get("/access", name="read_access")
@allow(Role.FACILITATOR)
def read_access(request: Request, session: SessionDep, done: str = "") -> Response:
    """The access settings: network mode, today's join code, ending sessions."""
    settings = _settings(request)
    state = access_state.load_state(session)
    context = {
        "on_network": settings.serves_network,
        "address": join_address(settings) if settings.serves_network else "",
        "code": show_code(access_state.todays_join_code(session)),
        "has_passphrase": bool(state.passphrase_hash),
        "generation": state.session_generation,
        "done": done,
    }
    return render(request, "access/settings.html", context)


@router.post("/access/join-code", name="rotate_join_code")
@allow(Role.FACILITATOR)
def rotate_join_code(session: SessionDep) -> Response:
    """A new join code: the old one stops working (sessions already joined stay)."""
    access_state.rotate_join_code(session)
    return RedirectResponse("/access?done=code", status_code=303)


@router.post("/access/sessions", name="end_sessions")
@allow(Role.FACILITATOR)
def end_sessions(request: Request, session: SessionDep) -> Response:
    """End every session but this one: everyone joins or signs in again."""
    access_state.end_sessions(session)
    restamp(request, access_state.load_state(session))
    return RedirectResponse("/access?done=sessions", status_code=303)
