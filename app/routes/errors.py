"""Error answers: a page in the app's style for a browser, JSON for API and JSON clients.

A browser asks for text/html; it gets error.html with the status and the rule (400 for an id
that is not an id, 404 for a missing row or path, 405 for a method a path does not take, 422 for
refused input). htmx requests keep what they had (its swaps read fragments and JSON detail), and
a client that asks for JSON, or any /api path, gets FastAPI's {"detail": …}.
"""

from collections.abc import Sequence
from typing import Any

from fastapi import Request
from fastapi.exception_handlers import request_validation_exception_handler
from fastapi.exceptions import RequestValidationError
from starlette.exceptions import HTTPException as StarletteHTTPException
from starlette.responses import JSONResponse, Response

from app.db.session import busy_clause, is_busy
from app.routes.rendering import is_htmx, render
from app.services.study.conflicts import DeletedSinceError

API_PREFIXES = ("/api/", "/openapi.json")
# Starlette's own words for its errors, said as the rest of the app says things.
PLAIN_WORDS = {"Not Found": "There is no page at this address.",
               "Method Not Allowed": "This address does not take that kind of request."}


def wants_json(request: Request) -> bool:
    """An API path, or a client that asks for JSON and not for a page (never htmx)."""
    if request.url.path.startswith(API_PREFIXES):
        return True
    accept = request.headers.get("accept", "").lower()
    return not is_htmx(request) and "application/json" in accept and "text/html" not in accept


def wants_page(request: Request) -> bool:
    """A browser finding its way: it asks for text/html and is not htmx or an API client."""
    accept = request.headers.get("accept", "").lower()
    return "text/html" in accept and not is_htmx(request) and not wants_json(request)


def error_page(request: Request, status: int, message: str, rules: Sequence[str] = (),
               *, block: str | None = None) -> Response:
    """error.html with the status, one sentence and the rules broken (if any)."""
    return render(request, "error.html", {"status": status, "message": message,
                                          "rules": list(rules)}, status_code=status, block=block)


def not_found(request: Request, exc: Exception) -> Response:
    """A missing row (services' NotFoundError)."""
    if wants_json(request):
        return JSONResponse({"detail": str(exc)}, status_code=404)
    return error_page(request, 404, str(exc))


def deleted_since(request: Request, exc: Exception) -> Response:
    """An edit of a row someone deleted: who and when, in the form's place for htmx (409);
    a page of such a row is not found (404) and says the same."""
    assert isinstance(exc, DeletedSinceError)
    status, message = (404, exc.gone.sentence) if request.method in ("GET", "HEAD") \
        else (409, str(exc))
    if wants_json(request):
        return JSONResponse({"detail": message}, status_code=status)
    block = "message" if status == 409 and is_htmx(request) else None
    return error_page(request, status, message, block=block)


def http_error(request: Request, exc: Exception) -> Response:
    """Starlette's errors: an unknown path (404), a method the path does not take (405), …"""
    assert isinstance(exc, StarletteHTTPException)
    if wants_json(request):
        return JSONResponse({"detail": exc.detail}, status_code=exc.status_code,
                            headers=exc.headers)
    detail = str(exc.detail)
    response = error_page(request, exc.status_code, PLAIN_WORDS.get(detail, detail))
    response.headers.update(exc.headers or {})
    return response


def _rule(error: dict[str, Any]) -> str:
    """One refused input as people read it: where, then the rule."""
    where = " ".join(str(part) for part in error.get("loc", ()) if part not in ("body",))
    return f"{where}: {error.get('msg', 'not accepted')}" if where else str(error.get("msg"))


async def invalid_input(request: Request, exc: Exception) -> Response:
    """Refused input: a page for a browser, FastAPI's JSON detail for everyone else."""
    assert isinstance(exc, RequestValidationError)
    if not wants_page(request):
        return await request_validation_exception_handler(request, exc)
    errors = list(exc.errors())
    status = 400 if any(error.get("type") == "row_id" for error in errors) else 422
    message = ("The address names an id that cannot be one." if status == 400
               else "The request was refused; nothing was saved.")
    return error_page(request, status, message, [_rule(error) for error in errors])


RETRY_AFTER_SECONDS = 2
"""How soon a request refused as busy may be sent again (the worksheet's values are)."""


def database_busy(request: Request, exc: Exception) -> Response:
    """Another write held an SQLite database past the wait: 503 with Retry-After, never a
    server error (a page, JSON, or for htmx the message block, which the worksheet shows
    beside the field and sends the value again). Any other database error stays an error."""
    if not is_busy(exc):
        raise exc
    headers = {"Retry-After": str(RETRY_AFTER_SECONDS)}
    clause = busy_clause()
    message = clause[:1].upper() + clause[1:]
    if wants_json(request):
        return JSONResponse({"detail": message}, status_code=503, headers=headers)
    response = error_page(request, 503, message,
                          block="message" if is_htmx(request) else None)
    response.headers.update(headers)
    return response
