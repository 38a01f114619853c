"""Rows an import writes through the driver (SQLite) are stored as the ORM stores them.

On SQLite the import writes nodes, deviations, scenarios, steps and safeguards with the
driver's own executemany and each column's SQLAlchemy conversion prepared once per table
(`study_import._driver_insert`). The study row itself goes through the ORM in the same import,
so it is the yardstick: the same storage class per column type and the same text form of a
timestamp, and every row reads back through the ORM with its enumerations and booleans.
"""

import json
from typing import Any

from sqlalchemy import text
from sqlmodel import Session, select

from app.db.models import Scenario, Step, Study
from app.likelihood.types import StepKind
from app.services.exchange.study_import import import_study_text
from bench.generate import build_study


def stored(session: Session, sql: str, **params: Any) -> list[Any]:
    """Raw rows as SQLite holds them."""
    return list(session.connection().execute(text(sql), params))


def test_rows_written_through_the_driver_are_stored_as_the_orm_stores_them(
    session: Session,
) -> None:
    if session.connection().dialect.name != "sqlite":
        return  # PostgreSQL keeps Core's executemany
    study = import_study_text(session, json.dumps(build_study(40, seed=2)))
    [(study_created, study_type)] = stored(
        session, "SELECT created_at, typeof(created_at) FROM study WHERE id = :id", id=study.id)
    steps = stored(session, "SELECT created_at, typeof(created_at), kind, typeof(credited), "
                   "typeof(value) FROM step WHERE study_id = :id", id=study.id)
    assert steps and study_type == "text"
    for created, created_type, kind, credited_type, value_type in steps:
        assert (created_type, credited_type) == ("text", "integer")
        assert len(created) == len(study_created) and created[10] == study_created[10] == " "
        assert kind in {k.value for k in StepKind}
        assert value_type in ("real", "null")
    read_back = session.exec(select(Step).where(Step.study_id == study.id)).all()
    assert {type(step.kind) for step in read_back} == {StepKind}
    assert all(isinstance(step.credited, bool) for step in read_back)
    assert all(step.created_at.year == study.created_at.year for step in read_back)
    assert len(session.exec(select(Scenario).where(Scenario.study_id == study.id)).all()) == 40
    assert session.get(Study, study.id) is not None


def test_each_import_stamps_its_rows_with_its_own_time(session: Session) -> None:
    # The rows' timestamps are defaults filled in by the import itself: a second import in
    # the same process (a server) stamps its own time, not the first import's.
    first = import_study_text(session, json.dumps(build_study(5, seed=1)))
    second = import_study_text(session, json.dumps(build_study(5, seed=1)))
    stamps = [max(step.created_at for step in session.exec(
        select(Step).where(Step.study_id == study.id)).all()) for study in (first, second)]
    assert stamps[1] > stamps[0]
    assert stamps[1] >= second.created_at
