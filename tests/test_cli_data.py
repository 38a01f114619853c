"""`tallyroom backup`, `restore`, `export-all` and the copy `migrate` takes, run as a shell does."""

import sqlite3
import zipfile
from collections.abc import Iterator
from contextlib import closing
from pathlib import Path

import pytest
from alembic import command
from sqlmodel import Session

from app.cli import alembic_config, main, upgrade_database
from app.db.session import build_db_engine
from app.routes.rendering import CAUTIONS
from app.services.exchange.exports import study_json_bytes
from app.services.exchange.study_file import export_study
from tests.factories import make_scenario_tree, make_study
from tests.scratch_db import settings_pointing_at, sqlite_url


def _titles(path: Path) -> list[str]:
    with closing(sqlite3.connect(path)) as raw:
        return [title for (title,) in raw.execute("SELECT title FROM study ORDER BY id")]


def _add_study(path: Path, title: str) -> None:
    db_engine = build_db_engine(sqlite_url(path))
    with Session(db_engine) as session:
        make_study(session, title=title)
    db_engine.dispose()


@pytest.fixture
def database(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Iterator[Path]:
    """A migrated SQLite file holding one study, configured as the app's database."""
    path = tmp_path / "data" / "tallyroom.db"
    with settings_pointing_at(sqlite_url(path), monkeypatch):
        upgrade_database()
        _add_study(path, "Before the backup")
        yield path


def test_backup_writes_a_copy_that_restore_brings_back_after_a_yes(
    database: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
) -> None:
    copy = tmp_path / "elsewhere" / "copy.db"
    assert main(["backup", "--out", str(copy)]) == 0
    assert capsys.readouterr().out.startswith(f"wrote {copy} (")
    _add_study(database, "After the backup")
    monkeypatch.setattr("builtins.input", lambda _question: "y")
    assert main(["restore", str(copy)]) == 0
    assert _titles(database) == ["Before the backup"]
    (kept,) = (database.parent / "backups").glob("tallyroom-*-before-restore.db")
    assert _titles(kept) == ["Before the backup", "After the backup"]


@pytest.mark.parametrize("answer", ["", "n", "no thanks"])
def test_restore_changes_nothing_unless_the_answer_is_yes(
    database: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch, answer: str,
    capsys: pytest.CaptureFixture[str],
) -> None:
    copy = tmp_path / "copy.db"
    assert main(["backup", "--out", str(copy)]) == 0
    _add_study(database, "After the backup")
    questions: list[str] = []

    def ask(question: str) -> str:
        questions.append(question)
        return answer

    monkeypatch.setattr("builtins.input", ask)
    assert main(["restore", str(copy)]) == 1
    assert _titles(database) == ["Before the backup", "After the backup"]
    assert questions == [f"Replace the database {database} with {copy}? The current database "
                         f"is copied to {database.parent / 'backups'} first. Stop the server "
                         "before. [y/N] "]
    assert capsys.readouterr().out.endswith("tallyroom restore: nothing changed\n")


def test_restore_with_yes_does_not_ask(
    database: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    copy = tmp_path / "copy.db"
    assert main(["backup", "--out", str(copy)]) == 0
    _add_study(database, "After the backup")
    monkeypatch.setattr("builtins.input", lambda _q: pytest.fail("asked although --yes"))
    assert main(["restore", str(copy), "--yes"]) == 0
    assert _titles(database) == ["Before the backup"]


def test_backup_without_out_goes_to_the_backups_folder_beside_the_database(
    database: Path,
) -> None:
    assert main(["backup"]) == 0
    (copy,) = (database.parent / "backups").glob("tallyroom-*-manual.db")
    assert _titles(copy) == ["Before the backup"]


def test_restore_of_a_file_that_is_not_a_database_says_so_and_changes_nothing(
    database: Path, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    junk = tmp_path / "junk.db"
    junk.write_bytes(b"not a database" * 100)
    assert main(["restore", str(junk), "--yes"]) == 2
    assert capsys.readouterr().err.startswith(
        f"tallyroom restore: nothing changed: {junk} is not an SQLite database")
    assert _titles(database) == ["Before the backup"]


def test_migrate_copies_a_database_that_is_behind_before_changing_it(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "old.db"
    with settings_pointing_at(sqlite_url(path), monkeypatch):
        command.upgrade(alembic_config(), "0c15478a5dc4")
        with closing(sqlite3.connect(path)) as raw, raw:
            raw.execute("INSERT INTO study (version, created_at, updated_at, title, facility, "
                        "scope, revision_label, frequency_unit, criteria_basis, invented) "
                        "VALUES (1, '2026-01-01', '2026-01-01', 'Old', '', '', 'Draft', "
                        "'per year', '', 0)")
        assert main(["migrate"]) == 0
        assert main(["migrate"]) == 0  # at head: nothing to copy
    (copy,) = (tmp_path / "backups").glob("tallyroom-*-before-migration.db")
    assert capsys.readouterr().out.startswith(f"backed up the database to {copy} before")
    with closing(sqlite3.connect(copy)) as raw:
        assert raw.execute("SELECT version_num FROM alembic_version").fetchone() == (
            "0c15478a5dc4",)


@pytest.mark.parametrize("command_line", [["backup"], ["restore", "x.db", "--yes"]])
def test_on_postgresql_backup_and_restore_point_to_the_servers_own_tools(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str], command_line: list[str]
) -> None:
    with settings_pointing_at("postgresql+psycopg://tally@127.0.0.1:1/tallyroom", monkeypatch):
        assert main(command_line) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err.startswith(f"tallyroom {command_line[0]}: This database is PostgreSQL: "
                                   "back it up and restore it with the server's own tools")
    assert "pg_dump" in captured.err and "pg_restore" in captured.err


def test_export_all_writes_every_study_file_and_the_cautions_into_one_archive(
    session: Session, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    first = make_scenario_tree(session, title="Feed area (invented)").study_id
    second = make_scenario_tree(session, title="Flare header (invented)").study_id
    out = tmp_path / "all.zip"
    assert main(["export-all", "--out", str(out)]) == 0
    assert capsys.readouterr().out == f"wrote {out} ({out.stat().st_size:,} bytes), studies: 2\n"
    with zipfile.ZipFile(out) as archive:
        assert archive.namelist() == [
            f"studies/tallyroom-{first}-feed-area-invented.json",
            f"studies/tallyroom-{second}-flare-header-invented.json", "README.txt"]
        for name, study_id in zip(archive.namelist(), (first, second), strict=False):
            assert archive.read(name) == study_json_bytes(export_study(session, study_id))
        assert CAUTIONS in archive.read("README.txt").decode()
