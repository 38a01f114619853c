"""Migrations are the schema: `upgrade head` on an empty database matches the models."""

from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext
from sqlalchemy import Engine
from sqlmodel import SQLModel


def test_upgrade_head_leaves_no_drift_from_the_models(db_engine: Engine) -> None:
    with db_engine.connect() as connection:
        context = MigrationContext.configure(connection, opts={"compare_type": True})
        differences = compare_metadata(context, SQLModel.metadata)
    assert differences == []


def test_every_model_table_exists_after_upgrade(db_engine: Engine) -> None:
    from sqlalchemy import inspect

    assert set(SQLModel.metadata.tables) <= set(inspect(db_engine).get_table_names())
