"""Ids are never handed out twice: a page referring to a deleted row never touches a new one."""

import sqlite3
from pathlib import Path

import pytest
from alembic import command
from sqlalchemy import Engine
from sqlmodel import Session, SQLModel

from app.cli import alembic_config
from tests.factories import make_node, make_study
from tests.scratch_db import settings_pointing_at, sqlite_url


def test_a_row_created_after_deleting_the_newest_gets_a_new_id(session: Session) -> None:
    study = make_study(session)
    newest = make_node(session, study, number="2")
    deleted_id = newest.id
    session.delete(newest)
    session.commit()
    created = make_node(session, study, number="3")
    assert created.id is not None and deleted_id is not None
    assert created.id > deleted_id


def test_every_table_keyed_by_id_says_autoincrement_on_sqlite(db_engine: Engine) -> None:
    # Alembic's comparison does not see this table option, so the schema text is checked.
    if db_engine.dialect.name != "sqlite":
        pytest.skip("PostgreSQL sequences never reuse a value; the option is SQLite's")
    with db_engine.connect() as connection:
        schema: dict[str, str] = dict(connection.exec_driver_sql(
            "SELECT name, sql FROM sqlite_master WHERE type = 'table'").fetchall())
    keyed_by_id = [t.name for t in SQLModel.metadata.sorted_tables
                   if [c.name for c in t.primary_key.columns] == ["id"]]
    assert len(keyed_by_id) == 18  # 17 study tables (3 of estimate rounds, the word scale)
    # and access_state
    assert [t for t in keyed_by_id if "PRIMARY KEY AUTOINCREMENT" not in schema[t]] == []


def test_the_migration_keeps_every_row_id_and_link_of_an_existing_database(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    path = tmp_path / "before.db"
    with settings_pointing_at(sqlite_url(path), monkeypatch):
        command.upgrade(alembic_config(), "0c15478a5dc4")
        _write_two_studies(path)
        before = _contents(path)
        command.upgrade(alembic_config(), "head")
    after = _contents(path)
    assert after == before
    with sqlite3.connect(path) as raw:
        assert raw.execute("PRAGMA foreign_key_check").fetchall() == []
        assert raw.execute("SELECT seq FROM sqlite_sequence WHERE name = 'node'").fetchone() == (3,)


def _write_two_studies(path: Path) -> None:
    """Two studies with a category and nodes, written as plain SQL in the old revision's columns
    (today's models may have columns that revision lacks)."""
    now = "2026-12-01 00:00:00"
    tracked = "version, created_at, updated_at"
    with sqlite3.connect(path) as raw:
        for title in ("A", "B"):
            study_id = raw.execute(
                f"INSERT INTO study ({tracked}, title, facility, scope, revision_label, "
                "frequency_unit, criteria_basis, invented) VALUES (1, ?, ?, ?, '', '', "
                "'Draft', 'per year', '', 0)", (now, now, title)).lastrowid
            raw.execute(f"INSERT INTO severity_category ({tracked}, study_id, name, description, "
                        "tolerable_frequency, receptor, position) VALUES (1, ?, ?, ?, "
                        "'Single fatality', '', 1e-5, 'people', 0)", (now, now, study_id))
        for study_id, number in ((1, "1"), (2, "1"), (2, "2")):
            raw.execute(f"INSERT INTO node ({tracked}, study_id, number, name, design_intent, "
                        "drawing_reference, position) VALUES (1, ?, ?, ?, ?, 'Feed drum', '', "
                        "'', 0)", (now, now, study_id, number))


def _contents(path: Path) -> list[tuple[object, ...]]:
    with sqlite3.connect(path) as raw:
        studies = raw.execute("SELECT id, title FROM study ORDER BY id").fetchall()
        nodes = raw.execute("SELECT id, study_id, number FROM node ORDER BY id").fetchall()
        categories = raw.execute("SELECT id, study_id FROM severity_category").fetchall()
    return [*studies, *nodes, *categories]

