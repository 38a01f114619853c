"""Fixtures of the fuzzing layer: one demo study shared by every generated request of a module.

Hypothesis runs many examples inside one test function, so the study and the client are
module-scoped (a function-scoped fixture would not be reset between examples anyway).
"""

from collections.abc import Iterator

import pytest
from fastapi import FastAPI
from fastapi.testclient import TestClient
from sqlalchemy import Engine
from sqlmodel import Session

from app.db.tracking import AUTHOR_KEY
from app.demo import load_demo_study
from app.main import create_app
from app.routes.deps import AUTHOR_COOKIE, author_cookie_value
from tests.conftest import TEST_AUTHOR, empty_database


@pytest.fixture(scope="module")
def fuzz_study_id(db_engine: Engine) -> Iterator[int]:
    """The invented demo study, loaded once for the module; the database is emptied after."""
    with Session(db_engine) as session:
        session.info[AUTHOR_KEY] = TEST_AUTHOR
        study = load_demo_study(session)
        assert study.id is not None
        study_id = study.id
    yield study_id
    empty_database(db_engine)


@pytest.fixture(scope="module")
def fuzz_app(fuzz_study_id: int) -> FastAPI:
    """The app under fuzzing (created after the study, as a server would be)."""
    return create_app()


@pytest.fixture(scope="module")
def fuzz_client(fuzz_app: FastAPI) -> Iterator[TestClient]:
    """A client that raises the server's own exception, so a crash names its cause."""
    with TestClient(fuzz_app) as client:
        client.cookies.set(AUTHOR_COOKIE, author_cookie_value(TEST_AUTHOR))
        yield client
