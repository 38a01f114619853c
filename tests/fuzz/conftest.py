"""Fixtures of the fuzzing layer: one demo study shared by every generated request of a module.

Hypothesis runs many examples inside one test function, so the study and the client are
module-scoped (a function-scoped fixture would not be reset between examples anyway). The
client is the person at this computer (loopback, facilitator) with the session's CSRF token on
every request, so generated requests reach the routes instead of stopping at the access layer.
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
from tests.conftest import LOOPBACK_CLIENT, empty_database
from tests.helpers import TEST_AUTHOR
from tests.security.sessions import install_local_session


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
    """The loopback facilitator with a token, raising the server's own exception on a crash so
    the failure names its cause."""
    with TestClient(fuzz_app, client=LOOPBACK_CLIENT) as client:
        install_local_session(client, TEST_AUTHOR)
        yield client
