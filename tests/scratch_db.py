"""A throwaway SQLite database beside the test one, for tests that migrate, back up or restore."""

from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import pytest

from app.settings import get_settings


@contextmanager
def settings_pointing_at(url: str, monkeypatch: pytest.MonkeyPatch) -> Iterator[None]:
    """Settings (and so migrations and the command line) use `url` inside the block."""
    monkeypatch.setenv("TALLYROOM_DATABASE_URL", url)
    get_settings.cache_clear()
    try:
        yield
    finally:
        monkeypatch.undo()
        get_settings.cache_clear()


def sqlite_url(path: Path) -> str:
    """The SQLAlchemy URL of an SQLite file."""
    return f"sqlite:///{path}"
