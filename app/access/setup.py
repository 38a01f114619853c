"""Wires access into the app: middleware, app-wide checks, the sign-in handler, templates."""

from typing import Any
from urllib.parse import urlencode

from fastapi import Depends, FastAPI, Request
from jinja2 import pass_context
from markupsafe import Markup
from sqlmodel import Session
from starlette.responses import RedirectResponse, Response
from starlette.types import ASGIApp

from app.access.csrf import FIELD, HEADER, csrf_token
from app.access.guard import SignInNeeded, check_role, current_access, refuse_cross_site_writes
from app.access.middleware import (
    CrossSiteArrival,
    HostAllowList,
    KeyedSessionMiddleware,
    SecurityHeaders,
)
from app.access.network import host_names
from app.access.ratelimit import FailureLimiter
from app.access.redirects import same_site_path
from app.access.routes import router
from app.access.sessions import COOKIE, MAX_AGE_SECONDS
from app.access.state import load_state
from app.db.session import get_db_engine
from app.routes.rendering import render, templates
from app.settings import Settings


def _signing_key() -> str:
    with Session(get_db_engine()) as db:
        return load_state(db).secret_key


def install_access(application: FastAPI, settings: Settings) -> None:
    """Call before including the routers: the app-wide checks attach to routes as they come."""
    application.state.settings = settings
    application.state.join_limiter = FailureLimiter()
    application.router.dependencies.extend(
        [Depends(refuse_cross_site_writes), Depends(check_role)])
    application.add_middleware(KeyedSessionMiddleware, read_key=_signing_key,  # type: ignore[arg-type]
                               session_cookie=COOKIE, max_age=MAX_AGE_SECONDS,
                               same_site="strict")
    application.add_middleware(CrossSiteArrival)
    application.add_middleware(HostAllowList, allowed=host_names(settings))
    application.add_exception_handler(SignInNeeded, _sign_in_needed)
    application.include_router(router)
    build_stack = application.build_middleware_stack

    def build_with_headers() -> ASGIApp:
        # Outside Starlette's error middleware, so even a 500 page carries the headers.
        return SecurityHeaders(build_stack())

    application.build_middleware_stack = build_with_headers  # type: ignore[method-assign]


def _sign_in_needed(request: Request, _exc: Exception) -> Response:
    """Not joined yet: pages go to the join form; htmx and writes get 401."""
    settings: Settings = request.app.state.settings
    if not settings.serves_network:
        return render(request, "error.html", {
            "status": 403,
            "message": "This Tallyroom serves only the computer it runs on. To share it on a "
                       "meeting-room network, start it with `tallyroom serve --lan`."},
            status_code=403)
    path = same_site_path(request.url.path + (f"?{request.url.query}" if request.url.query
                                              else ""))
    target = f"/join?{urlencode({'next': path})}" if path != "/" else "/join"
    if request.method == "GET" and request.headers.get("HX-Request") != "true":
        return RedirectResponse(target, status_code=303)
    response = render(request, "error.html", {
        "status": 401, "message": "Join with today's code or sign in first."}, status_code=401)
    response.headers["HX-Redirect"] = target
    return response


@pass_context
def _csrf_field(context: dict[str, Any]) -> Markup:
    """The hidden field every plain form carries: {{ csrf_field() }}."""
    token = csrf_token(context["request"])
    return Markup('<input type="hidden" name="{}" value="{}">').format(FIELD, token)


@pass_context
def _csrf_token(context: dict[str, Any]) -> str:
    return csrf_token(context["request"])


@pass_context
def _access(context: dict[str, Any]) -> object:
    return current_access(context["request"])


templates.env.globals.update(csrf_field=_csrf_field, csrf_token=_csrf_token,
                             csrf_header=HEADER, access=_access)
