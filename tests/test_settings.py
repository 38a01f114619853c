"""Settings come from TALLYROOM_ variables and refuse databases the app was not built for."""

import pytest
from pydantic import ValidationError

from app.settings import DEFAULT_DATABASE_URL, Settings


def test_the_default_database_is_an_sqlite_file_in_the_ignored_data_folder(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    monkeypatch.delenv("TALLYROOM_DATABASE_URL", raising=False)
    assert Settings().database_url == DEFAULT_DATABASE_URL
    assert DEFAULT_DATABASE_URL.endswith("/data/tallyroom.db")


def test_a_postgresql_url_is_accepted(monkeypatch: pytest.MonkeyPatch) -> None:
    url = "postgresql+psycopg://tally@127.0.0.1:5432/tallyroom"
    monkeypatch.setenv("TALLYROOM_DATABASE_URL", url)
    assert Settings().database_url == url


def test_an_unsupported_database_is_refused_by_name(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("TALLYROOM_DATABASE_URL", "mysql://x@y/z")
    with pytest.raises(ValidationError, match="must be an sqlite:// or postgresql:// URL"):
        Settings()
