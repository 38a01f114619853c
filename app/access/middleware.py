"""ASGI layers around the whole app: security headers, the Host allow-list, signed sessions."""

import html
from collections.abc import Callable

import itsdangerous
from starlette.concurrency import run_in_threadpool
from starlette.datastructures import Headers, MutableHeaders
from starlette.middleware.sessions import SessionMiddleware
from starlette.responses import HTMLResponse, PlainTextResponse
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from app.access.network import host_of
from app.access.redirects import same_site_location, same_site_path

# No inline script anywhere (static files only), nothing from other sites, never in a frame.
CONTENT_SECURITY_POLICY = (
    "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; "
    "font-src 'self'; connect-src 'self'; object-src 'none'; base-uri 'none'; "
    "form-action 'self'; frame-ancestors 'none'"
)
SECURITY_HEADERS = {
    "Content-Security-Policy": CONTENT_SECURITY_POLICY,
    "X-Content-Type-Options": "nosniff",
    "Referrer-Policy": "same-origin",
    "X-Frame-Options": "DENY",  # frame-ancestors for browsers that predate it
}


class SecurityHeaders:
    """Adds the security headers to every response and keeps redirects on this site."""

    def __init__(self, app: ASGIApp) -> None:
        self.app = app

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        host = Headers(scope=scope).get("host", "")

        async def send_with_headers(message: Message) -> None:
            if message["type"] == "http.response.start":
                headers = MutableHeaders(scope=message)
                for name, value in SECURITY_HEADERS.items():
                    headers.setdefault(name, value)
                for name in ("location", "hx-redirect"):
                    if name in headers:
                        headers[name] = same_site_location(headers[name], host)
            await send(message)

        await self.app(scope, receive, send_with_headers)


class HostAllowList:
    """Refuses (400) a request whose Host is not one of this server's names (DNS rebinding)."""

    def __init__(self, app: ASGIApp, allowed: frozenset[str]) -> None:
        self.app = app
        self.allowed = allowed

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] in ("http", "websocket"):
            host = host_of(Headers(scope=scope).get("host", ""))
            if host not in self.allowed:
                response = PlainTextResponse(
                    "Refused: this server does not answer to the host name "
                    f"'{host[:100]}'. Use the address Tallyroom printed when it started.",
                    status_code=400)
                await response(scope, receive, send)
                return
        await self.app(scope, receive, send)


class CrossSiteArrival:
    """A link followed from another site arrives without the SameSite=Strict cookie; answering
    it would start a new session over the browser's own (name lost, open tabs' tokens void).
    Instead it gets a page that reloads the same address from this site, cookie included."""

    def __init__(self, app: ASGIApp) -> None:
        self.app = app

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        headers = Headers(scope=scope) if scope["type"] == "http" else Headers()
        if (scope["type"] == "http" and scope["method"] in ("GET", "HEAD")
                and headers.get("sec-fetch-site") == "cross-site"
                and headers.get("sec-fetch-mode") == "navigate"):
            path = scope.get("raw_path", b"/").decode("latin-1")
            query = scope.get("query_string", b"").decode("latin-1")
            target = html.escape(same_site_path(path + (f"?{query}" if query else "")))
            page = (f'<!doctype html><meta charset="utf-8"><meta http-equiv="refresh" '
                    f'content="0;url={target}"><title>Tallyroom</title>'
                    f'<p><a href="{target}">Continue to Tallyroom</a></p>')
            await HTMLResponse(page)(scope, receive, send)
            return
        await self.app(scope, receive, send)


class KeyedSessionMiddleware(SessionMiddleware):
    """Starlette's signed-cookie sessions, with the signing key read on the first request.

    The key lives in the database (app/access/state.py); reading it lazily lets the app be
    built before the database is reachable, as the tests and the docs check do.
    """

    def __init__(self, app: ASGIApp, read_key: Callable[[], str], **options: object) -> None:
        super().__init__(app, secret_key="read on the first request", **options)  # type: ignore[arg-type]
        self._read_key = read_key
        self._keyed = False

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if not self._keyed and scope["type"] in ("http", "websocket"):
            self.signer = itsdangerous.TimestampSigner(await run_in_threadpool(self._read_key))
            self._keyed = True
        await super().__call__(scope, receive, send)
