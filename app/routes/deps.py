"""Request dependencies, aliased once for every router."""

from collections.abc import Iterator
from typing import Annotated
from urllib.parse import quote, unquote

from fastapi import Depends, Request
from fastapi.exceptions import RequestValidationError
from sqlmodel import Session

from app.db.ids import MAX_ROW_ID, read_row_id
from app.db.session import get_db_engine
from app.db.tracking import AUTHOR_KEY
from app.services.study_tree import NotFoundError

AUTHOR_COOKIE = "tallyroom_author"
AUTHOR_LIMIT = 120  # ChangeLogEntry.author


def author_cookie_value(name: str) -> str:
    """The name as a cookie value: percent-encoded UTF-8, since a header carries only Latin-1."""
    return quote(name.strip(), safe="")


def author_name(request: Request) -> str:
    """The name this browser gave for the change log ('' until it is given), in any script.

    Control characters (NUL among them, which PostgreSQL refuses in text) are dropped.
    """
    typed = unquote(request.cookies.get(AUTHOR_COOKIE, ""), errors="replace")
    return "".join(ch for ch in typed if ch.isprintable()).strip()[:AUTHOR_LIMIT]


def check_path_ids(request: Request) -> None:
    """Every `…_id` in the path must be a row id (app-wide dependency, runs before the route).

    A page (GET) naming an impossible row is simply not found (404); a write answers 422 naming
    the rule, like any other refused input.
    """
    for name, value in request.path_params.items():
        if name.endswith("_id") and read_row_id(value) is None:
            rule = f"an id is a whole number from 1 to {MAX_ROW_ID} in ASCII digits"
            if request.method in ("GET", "HEAD"):
                raise NotFoundError(f"There is no such page: {rule} (got '{value}').")
            raise RequestValidationError([{"type": "row_id", "loc": ("path", name),
                                           "msg": rule, "input": value}])


def get_session(request: Request) -> Iterator[Session]:
    """One database session per request, stamped with the author for the change log."""
    with Session(get_db_engine()) as session:
        session.info[AUTHOR_KEY] = author_name(request)
        yield session


SessionDep = Annotated[Session, Depends(get_session)]
# The bounds of a row id typed into a query or form field (`Query(**ID_BOUNDS)`).
ID_BOUNDS = {"ge": 1, "le": MAX_ROW_ID}
AuthorDep = Annotated[str, Depends(author_name)]
