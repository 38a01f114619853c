"""Request dependencies, aliased once for every router."""

from collections.abc import Mapping
from typing import Annotated, Any

from fastapi import Depends, HTTPException, Request
from fastapi.exceptions import RequestValidationError
from sqlmodel import Session

from app.access.csrf import FIELD as CSRF_FIELD
from app.access.guard import current_access
from app.db.ids import MAX_ROW_ID, read_row_id
from app.db.session import get_session
from app.services.study.conflicts import PageEdit


def author_name(request: Request) -> str:
    """The name this session signs the change log with ('' until it is given)."""
    access = current_access(request)
    return access.name if access else ""


async def check_path_ids(request: Request) -> None:
    """Every `…_id` in the path must be a row id (app-wide dependency, runs before the route;
    async, as it reads no database: no trip through the thread pool).

    A page (GET) naming an impossible row is not understood (400); a write answers 422 naming
    the rule, like any other refused input.
    """
    for name, value in request.path_params.items():
        if name.endswith("_id") and read_row_id(value) is None:
            rule = f"an id is a whole number from 1 to {MAX_ROW_ID} in ASCII digits"
            if request.method in ("GET", "HEAD"):
                raise HTTPException(400, f"This address is not understood: {rule} "
                                         f"(got '{value}').")
            raise RequestValidationError([{"type": "row_id", "loc": ("path", name),
                                           "msg": rule, "input": value}])


# The request's one database session: the access check (app/access/guard.check_role) opened
# it first and stamped it with the author for the change log.
SessionDep = Annotated[Session, Depends(get_session)]
# The bounds of a row id typed into a query or form field (`Query(**ID_BOUNDS)`).
ID_BOUNDS = {"ge": 1, "le": MAX_ROW_ID}


async def _author_of_request(request: Request) -> str:
    # As a dependency: async, no thread-pool trip for reading the request's own state.
    return author_name(request)


AuthorDep = Annotated[str, Depends(_author_of_request)]


ORIGINAL_PREFIX = "orig_"
# The other person's values a conflict showed, sent back with "keep mine" / "take theirs".
SEEN_PREFIX = "seen_"
PAGE_FIELDS = {"version", "client", "seq", "resolution", CSRF_FIELD}


def read_page_edit(form: Mapping[str, Any]) -> PageEdit:
    """What the page knew: the row's version, each field's loaded value, its id and sequence.

    Any: raw form values (a boundary).
    """
    originals = {key.removeprefix(ORIGINAL_PREFIX): value for key, value in form.items()
                 if key.startswith(ORIGINAL_PREFIX)}
    return PageEdit(version=_number(form.get("version")), originals=originals,
                    client=str(form.get("client") or "")[:64], seq=_number(form.get("seq")))


def _number(value: Any) -> int | None:  # Any: one raw form value
    text = str(value if value is not None else "").strip()
    return int(text) if text.isascii() and text.isdigit() and len(text) < 12 else None


def read_seen(form: Mapping[str, Any]) -> dict[str, str]:
    """The other person's values a conflict showed (seen_…), by field.

    Any: raw form values (a boundary).
    """
    return {key.removeprefix(SEEN_PREFIX): str(value) for key, value in form.items()
            if key.startswith(SEEN_PREFIX)}
