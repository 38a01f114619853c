"""Shared fixtures: one migrated test database, emptied after every test.

The database URL comes from TALLYROOM_TEST_DATABASE_URL (default: an SQLite file in a
temporary folder) so the same suite can run on PostgreSQL.
"""

import os
import tempfile
from collections.abc import Iterator
from pathlib import Path

import pytest

_TMP = Path(tempfile.mkdtemp(prefix="tallyroom-test-"))
TEST_DATABASE_URL = os.environ.get(
    "TALLYROOM_TEST_DATABASE_URL", f"sqlite:///{_TMP / 'test.db'}"
)
# Set before the app reads its settings, so every engine in the process is the test one.
os.environ["TALLYROOM_DATABASE_URL"] = TEST_DATABASE_URL
# The test client's host name (http://testserver), besides the loopback names.
os.environ["TALLYROOM_EXTRA_HOSTS"] = '["testserver"]'
# No rolling copies of the test database on every app shutdown; tests/db/test_backups.py and
# tests/test_server_process.py turn them on where they are the subject.
os.environ["TALLYROOM_BACKUP_KEEP"] = "0"

from fastapi.testclient import TestClient  # noqa: E402
from sqlalchemy import Engine  # noqa: E402
from sqlmodel import Session, SQLModel  # noqa: E402

from app.cli import upgrade_database  # noqa: E402
from app.db.models import Study  # noqa: E402
from app.db.session import get_db_engine  # noqa: E402
from app.db.tracking import AUTHOR_KEY, install_tracking  # noqa: E402
from app.demo import load_demo_study  # noqa: E402
from app.main import create_app  # noqa: E402
from app.services.study.stored_results import install_stored_results  # noqa: E402
from tests.helpers import TEST_AUTHOR  # noqa: E402
from tests.security.sessions import install_local_session  # noqa: E402

LOOPBACK_CLIENT = ("127.0.0.1", 50000)


@pytest.fixture(scope="session")
def db_engine() -> Iterator[Engine]:
    """The test database, migrated once to head."""
    upgrade_database()
    install_tracking()
    install_stored_results()
    yield get_db_engine()


def empty_database(db_engine: Engine) -> None:
    """Delete every row, children first."""
    with db_engine.begin() as connection:
        for table in reversed(SQLModel.metadata.sorted_tables):
            connection.execute(table.delete())


@pytest.fixture
def session(db_engine: Engine) -> Iterator[Session]:
    """A session on the test database; the database is emptied afterwards."""
    with Session(db_engine) as db_session:
        db_session.info[AUTHOR_KEY] = TEST_AUTHOR
        yield db_session
    empty_database(db_engine)


@pytest.fixture
def client(session: Session) -> Iterator[TestClient]:
    """An httpx client on the app as the person at this computer (loopback, facilitator):
    its session carries the change-log name, and every request sends the session's CSRF
    token in the header, as the pages' htmx does."""
    with TestClient(create_app(), client=LOOPBACK_CLIENT) as test_client:
        install_local_session(test_client, TEST_AUTHOR)
        yield test_client


@pytest.fixture
def demo_study(session: Session) -> Study:
    """The invented demo study, loaded through the one demo loader."""
    return load_demo_study(session)
