"""Backups: consistent copies taken while people edit, rolling copies kept to a bound."""

import sqlite3
import threading
import time
from contextlib import closing
from pathlib import Path

import pytest
from sqlalchemy import Engine, text

from app.db.backups import (
    BackupError,
    backups_folder,
    check_database,
    copy_database,
    prune_backups,
    restore_database,
    sqlite_file,
    take_backup,
)
from app.db.session import build_db_engine
from app.lifecycle import RollingBackups
from tests.scratch_db import sqlite_url

WRITERS = 3


def _rows(path: Path, sql: str = "SELECT writer, n, half FROM edit") -> set[tuple[int, ...]]:
    with closing(sqlite3.connect(path)) as raw:
        return set(raw.execute(sql).fetchall())


def _edits_database(path: Path) -> Engine:
    # The app's engine settings (WAL, busy timeout), on a table of numbered edits.
    db_engine = build_db_engine(sqlite_url(path))
    with db_engine.begin() as connection:
        connection.execute(text(
            "CREATE TABLE edit (id INTEGER PRIMARY KEY, writer INT, n INT, half INT)"))
    return db_engine


def _write_until(db_engine: Engine, writer: int, stop: threading.Event,
                 acknowledged: list[tuple[int, int]]) -> None:
    n = 0
    while not stop.is_set():
        with db_engine.begin() as connection:  # one edit = two rows in one transaction
            for half in (1, 2):
                connection.execute(text("INSERT INTO edit (writer, n, half) VALUES (:w, :n, :h)"),
                                   {"w": writer, "n": n, "h": half})
        acknowledged.append((writer, n))  # the commit has returned: the edit is acknowledged
        n += 1
        # A person pauses between edits. Back-to-back writers with no pause can starve one
        # another: SQLite's busy handler sleeps and retries with no queue, so one writer can
        # lose every race until its busy timeout ends, with no backup running at all.
        time.sleep(0.001)


def test_a_backup_taken_while_edits_run_holds_every_edit_acknowledged_before_it(
    tmp_path: Path,
) -> None:
    live, copy, restored = tmp_path / "live.db", tmp_path / "copy.db", tmp_path / "restored.db"
    db_engine = _edits_database(live)
    stop, acknowledged = threading.Event(), list[tuple[int, int]]()
    writers = [threading.Thread(target=_write_until, args=(db_engine, w, stop, acknowledged))
               for w in range(WRITERS)]
    for thread in writers:
        thread.start()
    while len(acknowledged) < 200:
        time.sleep(0.01)
    before_copy = set(acknowledged)
    copy_database(live, copy)
    time.sleep(0.2)
    stop.set()
    for thread in writers:
        thread.join()
    restore_database_file(copy, restored)
    in_copy = _rows(restored)
    copied_edits = {(w, n) for w, n, _half in in_copy}
    assert before_copy <= copied_edits
    # One snapshot: no edit half in, and the writers went on while and after it was taken.
    assert {(w, n, 1) for w, n in copied_edits} | {(w, n, 2) for w, n in copied_edits} == in_copy
    assert len(copied_edits) < len(acknowledged)
    with closing(sqlite3.connect(restored)) as raw:
        assert raw.execute("PRAGMA integrity_check").fetchone() == ("ok",)
        assert raw.execute("PRAGMA journal_mode").fetchone() == ("wal",)
    db_engine.dispose()


def restore_database_file(copy: Path, target: Path) -> None:
    """restore_database checks for a Tallyroom schema; this copy is the bare edit table."""
    with closing(sqlite3.connect(copy)) as src, closing(sqlite3.connect(target)) as dst:
        src.backup(dst)
        dst.execute("PRAGMA journal_mode=WAL")


def test_a_copy_is_one_file_without_a_write_ahead_log(tmp_path: Path) -> None:
    _edits_database(tmp_path / "live.db").dispose()
    copy_database(tmp_path / "live.db", tmp_path / "copy.db")
    assert not (tmp_path / "copy.db-wal").exists()
    with closing(sqlite3.connect(tmp_path / "copy.db")) as raw:
        assert raw.execute("PRAGMA journal_mode").fetchone() == ("delete",)


def test_rolling_backups_keep_the_newest_automatic_copies_and_every_manual_one(
    tmp_path: Path,
) -> None:
    database = tmp_path / "tallyroom.db"
    _edits_database(database).dispose()
    manual = take_backup(database, "manual")
    made = [take_backup(database, reason, keep=3)
            for reason in ("periodic", "periodic", "shutdown", "before-migration", "periodic")]
    assert sorted(backups_folder(database).iterdir()) == sorted([manual, *made[-3:]])
    assert prune_backups(backups_folder(database), 1) == made[-3:-1]


def test_the_server_copies_only_when_the_database_changed_and_checkpoints_at_stop(
    tmp_path: Path,
) -> None:
    database = tmp_path / "tallyroom.db"
    db_engine = _edits_database(database)
    rolling = RollingBackups(database, keep=5)
    assert rolling.backup_if_changed("periodic") is None
    with db_engine.begin() as connection:
        connection.execute(text("INSERT INTO edit (writer, n, half) VALUES (9, 9, 1)"))
    first = rolling.backup_if_changed("periodic")
    assert first is not None and _rows(first) == {(9, 9, 1)}
    assert rolling.backup_if_changed("periodic") is None
    with db_engine.begin() as connection:
        connection.execute(text("INSERT INTO edit (writer, n, half) VALUES (9, 10, 1)"))
    db_engine.dispose()
    last = rolling.stop()
    assert last is not None and last.name.endswith("-shutdown.db")
    assert _rows(last) == {(9, 9, 1), (9, 10, 1)}
    wal = database.with_name("tallyroom.db-wal")
    assert not wal.exists() or wal.stat().st_size == 0


def test_restore_refuses_a_file_that_is_not_a_tallyroom_database(tmp_path: Path) -> None:
    not_sqlite = tmp_path / "notes.db"
    not_sqlite.write_text("minutes of the session")
    other = tmp_path / "other.db"
    _edits_database(other).dispose()
    with pytest.raises(BackupError, match="not an SQLite database"):
        check_database(not_sqlite)
    with pytest.raises(BackupError, match="an SQLite file but not a Tallyroom database"):
        restore_database(other, tmp_path / "live.db")
    with pytest.raises(BackupError, match="there is no file at"):
        check_database(tmp_path / "missing.db")


@pytest.mark.parametrize(("url", "expected"), [
    ("sqlite:////srv/tallyroom/data/tallyroom.db", Path("/srv/tallyroom/data/tallyroom.db")),
    ("sqlite://", None),
    ("postgresql+psycopg://tally@127.0.0.1:5432/tallyroom", None),
])  # fmt: skip
def test_only_an_sqlite_file_is_copied_here(url: str, expected: Path | None) -> None:
    assert sqlite_file(url) == expected
