"""What the server does around its life: a warm start, background checkpoints and rolling
backups while it runs, a clean stop.

Started by the app's lifespan. Before the first request every template is compiled and the
objects of the start are set aside from the garbage collector (`warm_up`), so neither costs
a request; the collector's full passes wait until no request is in flight
(`idle_collection`). While it serves, the write-ahead log is copied into the database file every
second on a thread of its own (`WalCheckpoints`), not inside a request's commit. A stop by
Ctrl-C or SIGTERM (uvicorn handles both) ends the same way: the write-ahead log is
checkpointed into the database file and, if anything changed since the last copy, a
"shutdown" backup is taken. A kill -9 skips this; SQLite's WAL still keeps every committed
write, and the periodic copies bound what a lost disk costs.
"""

import asyncio
import gc
import logging
import sqlite3
import threading
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager, suppress
from pathlib import Path

from app.db.backups import Fingerprint, checkpoint, fingerprint, sqlite_file, take_backup
from app.idle_collection import collect_when_idle
from app.routes.rendering import compile_templates
from app.settings import get_settings

log = logging.getLogger("tallyroom")


class RollingBackups:
    """Copies of one SQLite file, taken only when it has changed since the last copy."""

    def __init__(self, database: Path, keep: int) -> None:
        self.database = database
        self.keep = keep
        self.last_copied: Fingerprint = fingerprint(database)

    def backup_if_changed(self, reason: str) -> Path | None:
        """Take a copy when the file or its log changed; None when nothing did."""
        current = fingerprint(self.database)
        if current == self.last_copied or self.keep == 0:
            return None
        return self._copy(reason, current)

    def _copy(self, reason: str, current: Fingerprint) -> Path:
        # The mark is taken before the copy: an edit made during it is copied next time.
        copy = take_backup(self.database, reason, keep=self.keep)
        self.last_copied = current
        return copy

    async def every(self, seconds: float) -> None:
        """Look for changes every `seconds` until cancelled."""
        while True:
            await asyncio.sleep(seconds)
            try:
                await asyncio.to_thread(self.backup_if_changed, "periodic")
            except Exception:  # a failed copy must never stop the server; say it and retry
                log.exception("periodic backup of %s failed", self.database)

    def stop(self) -> Path | None:
        """Checkpoint the log into the database file, then copy it if it changed."""
        changed = fingerprint(self.database) != self.last_copied
        try:
            checkpoint(self.database)
        except Exception:  # readers still open: SQLite checkpoints again on last close
            log.exception("checkpoint of %s at shutdown failed", self.database)
        if not changed or self.keep == 0:
            return None
        return self._copy("shutdown", fingerprint(self.database))


class WalCheckpoints:
    """Copies an SQLite write-ahead log into its database file off the request path.

    A commit otherwise does it itself whenever the log passes SQLite's bound (measured: one
    edit in about two hundred paid for it). PASSIVE never waits for a reader or a writer, so
    a request never waits for it; what it could not copy yet is copied on a later round. The
    commits' own bound (`app.db.session.WAL_AUTOCHECKPOINT_PAGES`) stays as the backstop.
    """

    def __init__(self, database: Path) -> None:
        self.database = database
        self.connection = sqlite3.connect(database, timeout=0, check_same_thread=False)
        self.last_seen: Fingerprint = fingerprint(database)
        # A stop cancels the waiting task, not its thread: close waits for a round in progress.
        self.in_use = threading.Lock()
        self.closed = False

    def checkpoint_if_written(self) -> tuple[int, int, int] | None:
        """(busy, frames in the log, frames copied) after a PASSIVE checkpoint, or None when
        nothing was written since the last round."""
        with self.in_use:
            current = fingerprint(self.database)
            if self.closed or current == self.last_seen:
                return None
            busy, logged, copied = self.connection.execute(
                "PRAGMA wal_checkpoint(PASSIVE)").fetchone()
            self.last_seen = fingerprint(self.database)
            return int(busy), int(logged), int(copied)

    async def every(self, seconds: float) -> None:
        """Checkpoint every `seconds` on a worker thread until cancelled."""
        while True:
            await asyncio.sleep(seconds)
            try:
                await asyncio.to_thread(self.checkpoint_if_written)
            except Exception:  # a failed round must never stop the server; the next retries
                log.exception("background checkpoint of %s failed", self.database)

    def close(self) -> None:
        """Close this checkpointer's own connection (after a round in progress)."""
        with self.in_use:
            self.closed = True
            self.connection.close()


def warm_up() -> None:
    """What the first requests would otherwise pay: compiling every template; then the
    start's objects (routes, models, templates, caches) are frozen out of the collector, so
    a full collection does not walk them again (measured: 170 ms inside one edit). No
    collection first: it costs about a second here, on every app start of the test suite,
    and would free only the start's little garbage."""
    compile_templates()
    gc.freeze()


@asynccontextmanager
async def server_lifespan(_app: object) -> AsyncIterator[None]:
    """Warm up; checkpoint and back up an SQLite database while the app serves; stop cleanly."""
    await asyncio.to_thread(warm_up)
    collecting = asyncio.create_task(collect_when_idle())
    try:
        async with _sqlite_upkeep():
            yield
    finally:
        collecting.cancel()
        with suppress(asyncio.CancelledError):
            await collecting
        gc.unfreeze()  # an app stopped in a longer-lived process (the tests) can be collected


@asynccontextmanager
async def _sqlite_upkeep() -> AsyncIterator[None]:
    """Background checkpoints and rolling backups of an SQLite file (nothing for PostgreSQL)."""
    settings = get_settings()
    database = sqlite_file(settings.database_url)
    if database is None or not database.is_file():
        yield
        return
    rolling = RollingBackups(database, settings.backup_keep)
    checkpoints = WalCheckpoints(database)
    tasks = [asyncio.create_task(rolling.every(settings.backup_interval_seconds)),
             asyncio.create_task(checkpoints.every(settings.wal_checkpoint_seconds))]
    try:
        yield
    finally:
        for task in tasks:
            task.cancel()
            with suppress(asyncio.CancelledError):
                await task
        checkpoints.close()
        await asyncio.to_thread(rolling.stop)
