"""Migration 3c8d0f1e6a52 adds the risk picture's fields to stored results of a populated
database, and the rows stored before it are computed again on the study's next read."""

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
from app.services.study.stored_results import compute_study_rows, ensure_current, is_current
from tests.helpers import TEST_AUTHOR
from tests.scratch_db import settings_pointing_at, sqlite_url

NEW_COLUMNS = {"sil_band", "withdrawn_category_id", "withdrawn_gap_orders", "withdrawn_sil_band",
               "withdrawn_demand_mode", "warning_count", "uncertain", "p_meets",
               "spread_median", "spread_p05", "spread_p95"}


def stored(session: Session, study_id: int) -> dict[int, dict[str, Any]]:
    table: Any = ScenarioResultRow
    return {row.scenario_id: dict(row._mapping) for row in session.connection().execute(
        select(table).where(table.study_id == study_id))}


def test_a_populated_database_upgrades_and_its_older_stored_rows_are_rebuilt(
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
        command.downgrade(alembic_config(), "9e9dca590747")  # the database as it was
        with sqlite3.connect(path) as raw:  # rows as the older code left them, one stale
            raw.execute("UPDATE result_total SET results_version = 1 WHERE node_id = 0")
            raw.execute("UPDATE scenario_result SET gap_orders = 99 WHERE scenario_id = "
                        "(SELECT min(scenario_id) FROM scenario_result)")
            before = raw.execute("SELECT count(*) FROM scenario_result").fetchone()
        command.upgrade(alembic_config(), "head")
    engine = create_engine(sqlite_url(path))
    assert {c["name"] for c in inspect(engine).get_columns("scenario_result")} >= NEW_COLUMNS
    with sqlite3.connect(path) as raw:
        assert raw.execute("SELECT count(*) FROM scenario_result").fetchone() == before
    with Session(engine) as session:
        assert not is_current(session, study_id)  # older rows: rebuilt on the next read
        ensure_current(session, study_id)
        assert is_current(session, study_id)
        rows = stored(session, study_id)
        assert rows == compute_study_rows(session, study_id)
        assert 99 not in {row["gap_orders"] for row in rows.values()}
        assert any(row["warning_count"] for row in rows.values())  # the demo warns somewhere
        assert any(row["withdrawn_category_id"] for row in rows.values())
    engine.dispose()
