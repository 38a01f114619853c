"""Request dependencies, aliased once for every router."""

from collections.abc import Iterator
from typing import Annotated

from fastapi import Depends, Request
from sqlmodel import Session

from app.access.guard import current_access
from app.db.session import get_db_engine
from app.db.tracking import AUTHOR_KEY


def author_name(request: Request) -> str:
    """The name this session signs the change log with ('' until it is given)."""
    access = current_access(request)
    return access.name if access else ""


def get_session(request: Request) -> Iterator[Session]:
    """One database session per request, stamped with the author for the change log."""
    with Session(get_db_engine()) as session:
        session.info[AUTHOR_KEY] = author_name(request)
        yield session


SessionDep = Annotated[Session, Depends(get_session)]
AuthorDep = Annotated[str, Depends(author_name)]
