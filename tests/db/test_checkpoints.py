"""The write-ahead log is copied into the database file off the request path, and stays bounded.

SQLite's own rule (https://www.sqlite.org/wal.html, "Automatic Checkpoint"): the commit that
leaves the log longer than `wal_autocheckpoint` pages copies it back, inside that commit.
"""

import sqlite3
from concurrent.futures import ThreadPoolExecutor
from contextlib import closing
from pathlib import Path

from sqlalchemy import Engine, text

from app.db.session import WAL_AUTOCHECKPOINT_PAGES, build_db_engine
from app.lifecycle import WalCheckpoints
from tests.scratch_db import sqlite_url


def _database(path: Path) -> Engine:
    db_engine = build_db_engine(sqlite_url(path))
    with db_engine.begin() as connection:
        connection.execute(text("CREATE TABLE edit (id INTEGER PRIMARY KEY, body TEXT)"))
    return db_engine


def _write(db_engine: Engine, rows: int) -> None:
    with db_engine.begin() as connection:
        for _ in range(rows):
            connection.execute(text("INSERT INTO edit (body) VALUES (:b)"), {"b": "x" * 3000})


def test_a_commit_checkpoints_only_past_the_backstop_bound(tmp_path: Path) -> None:
    db_engine = _database(tmp_path / "t.db")
    with db_engine.connect() as connection:
        assert connection.execute(text("PRAGMA wal_autocheckpoint")).scalar() == \
            WAL_AUTOCHECKPOINT_PAGES
        # Durability: a committed edit's log frame is on disk before the commit returns.
        assert connection.execute(text("PRAGMA synchronous")).scalar() == 2  # FULL
    # Past SQLite's default bound of 1,000 pages (about 1,300 here), below ours: the commits
    # left the log alone, so every frame is still waiting for a checkpoint.
    for _ in range(13):
        _write(db_engine, 100)
    with closing(sqlite3.connect(tmp_path / "t.db")) as raw:
        busy, logged, copied = raw.execute("PRAGMA wal_checkpoint(PASSIVE)").fetchone()
    assert busy == 0 and 1_000 < logged < WAL_AUTOCHECKPOINT_PAGES and copied == logged
    db_engine.dispose()


def test_the_server_checkpoints_each_round_only_what_was_written(tmp_path: Path) -> None:
    database = tmp_path / "t.db"
    db_engine = _database(database)
    checkpoints = WalCheckpoints(database)
    try:
        checkpoints.checkpoint_if_written()
        assert checkpoints.checkpoint_if_written() is None  # nothing written since
        _write(db_engine, 20)
        done = checkpoints.checkpoint_if_written()
        assert done is not None
        busy, logged, copied = done
        assert busy == 0 and logged > 0 and copied == logged
        assert checkpoints.checkpoint_if_written() is None
        # A reader holding an old snapshot does not make a round wait or fail.
        with db_engine.connect() as reader:
            reader.execute(text("BEGIN"))
            reader.execute(text("SELECT count(*) FROM edit")).scalar()
            _write(db_engine, 5)
            assert checkpoints.checkpoint_if_written() is not None
            reader.execute(text("ROLLBACK"))
    finally:
        checkpoints.close()
        db_engine.dispose()
    with closing(sqlite3.connect(database)) as raw:
        assert raw.execute("SELECT count(*) FROM edit").fetchone() == (25,)


def test_closing_waits_for_a_round_in_progress_and_later_rounds_do_nothing(
    tmp_path: Path,
) -> None:
    # A stop cancels the task that waits for a round, not the round's thread: closing the
    # connection under a running checkpoint crashed the interpreter before the lock.
    database = tmp_path / "t.db"
    db_engine = _database(database)
    checkpoints = WalCheckpoints(database)
    _write(db_engine, 50)
    with ThreadPoolExecutor(max_workers=4) as pool:
        rounds = [pool.submit(checkpoints.checkpoint_if_written) for _ in range(4)]
        checkpoints.close()
        for done in rounds:
            done.result()  # none raised
    _write(db_engine, 5)
    assert checkpoints.checkpoint_if_written() is None
    db_engine.dispose()
