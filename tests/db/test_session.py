"""Every SQLite connection is configured in one place: foreign keys, WAL, busy timeout."""

from pathlib import Path

import pytest
from sqlalchemy import text

from app.db.session import build_db_engine


@pytest.fixture
def sqlite_file_engine(tmp_path: Path):  # type: ignore[no-untyped-def]
    db_engine = build_db_engine(f"sqlite:///{tmp_path / 'sub' / 'x.db'}")
    yield db_engine
    db_engine.dispose()


def test_sqlite_connections_enforce_foreign_keys(sqlite_file_engine) -> None:  # type: ignore[no-untyped-def]
    with sqlite_file_engine.connect() as connection:
        assert connection.execute(text("PRAGMA foreign_keys")).scalar() == 1


def test_sqlite_file_databases_use_write_ahead_logging(sqlite_file_engine) -> None:  # type: ignore[no-untyped-def]
    with sqlite_file_engine.connect() as connection:
        assert connection.execute(text("PRAGMA journal_mode")).scalar() == "wal"
        assert connection.execute(text("PRAGMA busy_timeout")).scalar() == 5000


def test_the_database_folder_is_created_when_missing(tmp_path: Path) -> None:
    build_db_engine(f"sqlite:///{tmp_path / 'new' / 'folder' / 'x.db'}").dispose()
    assert (tmp_path / "new" / "folder").is_dir()
