"""Request dependencies, aliased once for every router."""

from collections.abc import Iterator
from typing import Annotated

from fastapi import Depends, Request
from fastapi.exceptions import RequestValidationError
from sqlmodel import Session

from app.access.guard import current_access
from app.db.ids import MAX_ROW_ID, read_row_id
from app.db.session import get_db_engine
from app.db.tracking import AUTHOR_KEY
from app.services.study.tree import NotFoundError


def author_name(request: Request) -> str:
    """The name this session signs the change log with ('' until it is given)."""
    access = current_access(request)
    return access.name if access else ""


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
