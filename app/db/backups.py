"""Consistent copies of the SQLite database, made with SQLite's online backup API.

A copy is one snapshot: every transaction committed before the copy began is in it and none
after, while writers keep going (WAL mode). Rolling copies go to a `backups` folder beside the
database file, named `tallyroom-<UTC time>-<reason>.db` so they sort by time; the automatic
ones are pruned to a bounded number, copies asked for by name or by hand are never pruned.
PostgreSQL is backed up with the server's own tools (pg_dump), never from here.
"""

import os
import sqlite3
from contextlib import closing
from datetime import UTC, datetime
from pathlib import Path

from sqlalchemy.engine import make_url

BACKUP_FOLDER_NAME = "backups"
MANUAL = "manual"
# Reasons of the copies the app makes by itself; only these are pruned.
AUTOMATIC_REASONS = ("periodic", "shutdown", "before-migration", "before-restore")
POSTGRESQL_ADVICE = (
    "This database is PostgreSQL: back it up and restore it with the server's own tools, "
    "e.g. `pg_dump --format=custom --file=tallyroom.dump DBNAME` and "
    "`pg_restore --clean --dbname=DBNAME tallyroom.dump`."
)

Fingerprint = tuple[tuple[int, int] | None, ...]


class BackupError(Exception):
    """A copy could not be made or read back; the message says which file and why."""


def sqlite_file(database_url: str) -> Path | None:
    """The database file of an SQLite URL; None for PostgreSQL or an in-memory database."""
    url = make_url(database_url)
    if url.get_backend_name() != "sqlite" or url.database in (None, "", ":memory:"):
        return None
    return Path(url.database)


def backups_folder(database: Path) -> Path:
    """Where the rolling copies of `database` live: a `backups` folder beside it."""
    return database.parent / BACKUP_FOLDER_NAME


def copy_database(source: Path, target: Path) -> None:
    """Write a consistent copy of `source` to `target` (a self-contained file, no WAL)."""
    if not source.is_file():
        raise BackupError(f"there is no database file at {source}")
    target.parent.mkdir(parents=True, exist_ok=True)
    # Written beside the target and renamed at the end, so a crash never leaves half a copy.
    partial = target.with_name(target.name + ".partial")
    partial.unlink(missing_ok=True)
    with closing(sqlite3.connect(source, timeout=30)) as src, \
            closing(sqlite3.connect(partial)) as dst:
        src.backup(dst)  # all pages in one step: one read transaction, one snapshot
        dst.execute("PRAGMA journal_mode=DELETE")
    os.replace(partial, target)


def check_database(path: Path) -> None:
    """Raise BackupError unless `path` is an intact SQLite file holding a Tallyroom database."""
    if not path.is_file():
        raise BackupError(f"there is no file at {path}")
    try:
        with closing(sqlite3.connect(f"file:{path}?mode=ro", uri=True)) as raw:
            verdict = raw.execute("PRAGMA integrity_check").fetchone()
            tables = {name for (name,) in raw.execute(
                "SELECT name FROM sqlite_master WHERE type = 'table'")}
    except sqlite3.DatabaseError as err:
        raise BackupError(f"{path} is not an SQLite database ({err})") from err
    if verdict != ("ok",):
        raise BackupError(f"{path} failed SQLite's integrity check: {verdict[0]}")
    if not {"alembic_version", "study"} <= tables:
        raise BackupError(f"{path} is an SQLite file but not a Tallyroom database")


def take_backup(database: Path, reason: str, *, keep: int | None = None) -> Path:
    """Copy `database` into its backups folder; with `keep`, prune automatic copies to that many."""
    stamp = datetime.now(UTC).strftime("%Y%m%d-%H%M%S-%f")[:-3]
    target = backups_folder(database) / f"tallyroom-{stamp}-{reason}.db"
    copy_database(database, target)
    if keep is not None:
        prune_backups(backups_folder(database), keep)
    return target


def prune_backups(folder: Path, keep: int) -> list[Path]:
    """Delete all but the `keep` newest automatic copies in `folder`; return what went."""
    automatic = sorted(
        path for path in folder.glob("tallyroom-*.db")
        if path.stem.endswith(tuple(f"-{reason}" for reason in AUTOMATIC_REASONS))
    )
    doomed = automatic[:-keep] if keep > 0 else automatic
    for path in doomed:
        path.unlink(missing_ok=True)
    return doomed


def fingerprint(database: Path) -> Fingerprint:
    """Changes whenever a write reaches the database or its write-ahead log."""
    marks: list[tuple[int, int] | None] = []
    for path in (database, database.with_name(database.name + "-wal")):
        try:
            status = path.stat()
        except FileNotFoundError:
            marks.append(None)
        else:
            marks.append((status.st_mtime_ns, status.st_size))
    return tuple(marks)


def checkpoint(database: Path) -> None:
    """Move the write-ahead log into the database file and empty it (a clean shutdown)."""
    with closing(sqlite3.connect(database, timeout=1)) as raw:
        raw.execute("PRAGMA wal_checkpoint(TRUNCATE)").fetchall()


def restore_database(backup: Path, database: Path) -> None:
    """Replace the contents of `database` with the copy `backup` (checked first)."""
    check_database(backup)
    with closing(sqlite3.connect(f"file:{backup}?mode=ro", uri=True)) as src, \
            closing(sqlite3.connect(database, timeout=30)) as dst:
        # The backup API writes into the live file as one transaction, WAL and all.
        src.backup(dst)
        dst.execute("PRAGMA journal_mode=WAL")
