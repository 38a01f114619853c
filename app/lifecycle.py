"""What the server does around its life: rolling backups while it runs, a clean stop.

Started by the app's lifespan, so a stop by Ctrl-C or SIGTERM (uvicorn handles both) ends
the same way: the write-ahead log is checkpointed into the database file and, if anything
changed since the last copy, a "shutdown" backup is taken. A kill -9 skips this; SQLite's
WAL still keeps every committed write, and the periodic copies bound what a lost disk costs.
"""

import asyncio
import logging
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager, suppress
from pathlib import Path

from app.db.backups import Fingerprint, checkpoint, fingerprint, sqlite_file, take_backup
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


@asynccontextmanager
async def server_lifespan(_app: object) -> AsyncIterator[None]:
    """Run rolling backups of an SQLite database while the app serves; stop cleanly."""
    settings = get_settings()
    database = sqlite_file(settings.database_url)
    if database is None or not database.is_file():
        yield
        return
    rolling = RollingBackups(database, settings.backup_keep)
    task = asyncio.create_task(rolling.every(settings.backup_interval_seconds))
    try:
        yield
    finally:
        task.cancel()
        with suppress(asyncio.CancelledError):
            await task
        await asyncio.to_thread(rolling.stop)
