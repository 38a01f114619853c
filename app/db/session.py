"""The one place that creates the database engine and configures its connections."""

from collections.abc import AsyncIterator, Callable
from functools import lru_cache
from pathlib import Path
from typing import Any

from sqlalchemy import Engine, event
from sqlalchemy.engine import make_url
from sqlalchemy.exc import OperationalError
from sqlalchemy.pool import StaticPool
from sqlmodel import Session, create_engine

from app.settings import get_settings

# Any in this module: SQLAlchemy's connection and pragma hooks are untyped (the driver boundary).

# A commit that leaves the write-ahead log longer than this many pages (4 KB each) copies the
# log into the database file itself, inside the request that committed (SQLite's default is
# 1,000). The server copies it in the background every second (app/lifecycle.py,
# WalCheckpoints), so a request reaches this bound only if that falls far behind; a process
# without it (the CLI, the tests) still checkpoints here, so the log cannot grow without bound.
WAL_AUTOCHECKPOINT_PAGES = 10_000


def _sqlite_pragmas(busy_seconds: float) -> Callable[[Any, Any], None]:
    """What every new SQLite connection is told first."""

    def set_pragmas(dbapi_connection: Any, _record: Any) -> None:
        # SQLite leaves foreign keys off by default; cascades and integrity rely on them.
        # synchronous stays at its default FULL: a commit's log frame is on disk before the
        # reply.
        cursor = dbapi_connection.cursor()
        cursor.execute("PRAGMA foreign_keys=ON")
        cursor.execute("PRAGMA journal_mode=WAL")
        cursor.execute(f"PRAGMA busy_timeout={round(busy_seconds * 1000)}")
        cursor.execute(f"PRAGMA wal_autocheckpoint={WAL_AUTOCHECKPOINT_PAGES}")
        cursor.close()

    return set_pragmas


def build_db_engine(url: str, busy_seconds: float | None = None) -> Engine:
    """Create an engine for `url`; dialect-specific settings live only here. `busy_seconds`:
    how long an SQLite write waits for another's (default: settings)."""
    parsed = make_url(url)
    if parsed.get_backend_name() != "sqlite":
        return create_engine(url, pool_pre_ping=True)
    kwargs: dict[str, Any] = {"connect_args": {"check_same_thread": False}}
    if parsed.database in (None, "", ":memory:"):
        kwargs["poolclass"] = StaticPool
    elif parsed.database:
        Path(parsed.database).parent.mkdir(parents=True, exist_ok=True)
    db_engine = create_engine(url, **kwargs)
    waits = get_settings().sqlite_busy_seconds if busy_seconds is None else busy_seconds
    event.listen(db_engine, "connect", _sqlite_pragmas(waits))
    return db_engine


BUSY_MESSAGES = ("database is locked", "database table is locked")
"""sqlite3's text for SQLITE_BUSY and SQLITE_LOCKED."""


def is_busy(err: BaseException) -> bool:
    """Whether the database refused a statement because another write held it past the wait
    (SQLite's "database is locked"), not because anything is wrong with the statement."""
    return isinstance(err, OperationalError) and str(err.orig).startswith(BUSY_MESSAGES)


def busy_clause(nothing_kept: str = "nothing was saved") -> str:
    """Why the database did not take a change, and that nothing of it was kept (a clause:
    the caller capitalises it or puts it after its own words)."""
    waited = get_settings().sqlite_busy_seconds
    return (f"the database is busy writing another large change (such as an import) and did "
            f"not take this one within {waited:g} second{'' if waited == 1 else 's'}; "
            f"{nothing_kept}. Try again in a moment.")


@lru_cache
def get_db_engine() -> Engine:
    """The process-wide engine for the configured database URL."""
    return build_db_engine(get_settings().database_url)


async def get_session() -> AsyncIterator[Session]:
    """One session per request. Async, so FastAPI opens and closes it on the event loop
    instead of a thread-pool trip each way: opening a session touches no database, and
    closing it returns the connection (a rollback of nothing once the route committed)."""
    with Session(get_db_engine()) as session:
        yield session
