"""Refusing cross-site writes: a per-session token on every write, and Origin checks."""

import hmac

from starlette.requests import Request

from app.access.sessions import ensure_session

HEADER = "X-CSRF-Token"
FIELD = "csrf_token"
SAFE_METHODS = frozenset({"GET", "HEAD", "OPTIONS", "TRACE"})
_FORM_TYPES = ("application/x-www-form-urlencoded", "multipart/form-data")


def csrf_token(request: Request) -> str:
    """This session's token (made with the session on first need)."""
    return str(ensure_session(request)["csrf"])


def is_cross_site(request: Request) -> bool:
    """True when the browser says the request comes from another site or origin."""
    if request.headers.get("sec-fetch-site") == "cross-site":
        return True
    origin = request.headers.get("origin")
    if origin is None:
        return False  # not sent by older browsers or by non-browser clients
    return origin != f"{request.url.scheme}://{request.headers.get('host', '')}"


async def sent_token(request: Request) -> str:
    """The token the request carries: the header (htmx, scripts) or the form field."""
    token = request.headers.get(HEADER)
    if token is None and request.headers.get("content-type", "").startswith(_FORM_TYPES):
        value = (await request.form()).get(FIELD)
        token = value if isinstance(value, str) else None
    return token or ""


def token_matches(request: Request, sent: str) -> bool:
    """True when `sent` is this session's token (constant-time comparison)."""
    expected = request.session.get("csrf")
    return isinstance(expected, str) and bool(sent) and hmac.compare_digest(
        sent.encode(), expected.encode())
