"""Migration 6d2a9c4e7b15 adds what the spreadsheet exports show to the stored results of a
populated database, and the rows stored before it are computed again on the study's next read,
after which the CSV is the one the from-scratch path writes."""

import sqlite3
from pathlib import Path
from typing import Any

import pytest
from alembic import command
from sqlalchemy import Engine, create_engine, inspect, select
from sqlmodel import Session

from app.cli import alembic_config
from app.db.models import ScenarioResultRow
from app.db.tracking import AUTHOR_KEY
from app.demo import load_demo_study
from app.services.exchange.export_csv import table_csv
from app.services.exchange.export_source import stored_scenarios
from app.services.exchange.export_tables import (
    SCENARIO_COLUMNS,
    Table,
    scenario_rows,
    scenario_table,
)
from app.services.study.stored_results import compute_study_rows, ensure_current, is_current
from app.services.study.table_figures import TableFigures
from app.services.study.tree import load_study_tree
from tests.helpers import TEST_AUTHOR
from tests.scratch_db import settings_pointing_at, sqlite_url

PREVIOUS_HEAD = "3f6b2d8e41c7"


def stored(session: Session, study_id: int) -> dict[int, dict[str, Any]]:
    table: Any = ScenarioResultRow
    return {row.scenario_id: dict(row._mapping) for row in session.connection().execute(
        select(table).where(table.study_id == study_id))}


def test_a_populated_database_upgrades_and_its_stored_rows_gain_the_table_figures(
    db_engine: Engine, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # db_engine: the session events that keep stored results are installed.
    path = tmp_path / "stored.db"
    with settings_pointing_at(sqlite_url(path), monkeypatch):
        command.upgrade(alembic_config(), "head")
        engine = create_engine(sqlite_url(path))
        with Session(engine) as session:
            session.info[AUTHOR_KEY] = TEST_AUTHOR
            study_id = load_demo_study(session).id or 0
            ensure_current(session, study_id)
        engine.dispose()
        command.downgrade(alembic_config(), PREVIOUS_HEAD)  # the database as it was
        with sqlite3.connect(path) as raw:  # rows as the older code left them: version 2
            assert "table_figures" not in {
                c[1] for c in raw.execute("PRAGMA table_info(scenario_result)")}
            raw.execute("UPDATE result_total SET results_version = 2 WHERE node_id = 0")
            before = raw.execute("SELECT count(*) FROM scenario_result").fetchone()
        command.upgrade(alembic_config(), "head")
    engine = create_engine(sqlite_url(path))
    assert "table_figures" in {c["name"] for c in inspect(engine).get_columns("scenario_result")}
    with sqlite3.connect(path) as raw:
        assert raw.execute("SELECT count(*) FROM scenario_result").fetchone() == before
        assert raw.execute("SELECT DISTINCT table_figures FROM scenario_result").fetchall() \
            == [("",)]  # the column's default until the rebuild
    with Session(engine) as session:
        assert not is_current(session, study_id)  # older rows: rebuilt on the next read
        ensure_current(session, study_id)
        assert is_current(session, study_id)
        rows = stored(session, study_id)
        assert len(rows) == before[0]
        assert rows == compute_study_rows(session, study_id)
        figures = [TableFigures.read(row["table_figures"]) for row in rows.values()]
        assert any(f.spread is not None for f in figures)
        assert any(f.warnings for f in figures)  # the demo warns somewhere
        stored_csv = table_csv(Table("Scenarios", SCENARIO_COLUMNS,
                                     list(scenario_rows(stored_scenarios(session, study_id)))))
        assert stored_csv == table_csv(scenario_table(load_study_tree(session, study_id)))
    engine.dispose()
