"""Route-test fixtures: a second person, for tests of two people editing one study at once."""

from collections.abc import Iterator

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session

from app.main import create_app
from tests.helpers import OTHER_AUTHOR
from tests.security.sessions import install_local_session


@pytest.fixture
def ben(session: Session) -> Iterator[TestClient]:
    """A second person at the same study, in a browser of their own (own session and name)."""
    with TestClient(create_app(), client=("127.0.0.1", 50001)) as other:
        install_local_session(other, OTHER_AUTHOR)
        yield other
