"""Alembic environment: the URL comes from the app's settings, the schema from its models."""

from alembic import context
from sqlmodel import SQLModel

import app.db.models  # noqa: F401  (registers every table on the metadata)
from app.db.session import build_db_engine
from app.settings import get_settings

target_metadata = SQLModel.metadata


def run_migrations_offline() -> None:
    """Emit SQL for the configured URL without connecting."""
    context.configure(
        url=get_settings().database_url,
        target_metadata=target_metadata,
        literal_binds=True,
        render_as_batch=True,
    )
    with context.begin_transaction():
        context.run_migrations()


def run_migrations_online() -> None:
    """Run migrations on a live connection (an existing one when the tests pass it in)."""
    connection = context.config.attributes.get("connection")
    if connection is not None:
        _run_on(connection)
        return
    db_engine = build_db_engine(get_settings().database_url)
    with db_engine.connect() as fresh:
        _run_on(fresh)
    db_engine.dispose()


def _run_on(connection: object) -> None:
    context.configure(
        connection=connection,  # type: ignore[arg-type]
        target_metadata=target_metadata,
        render_as_batch=True,
        compare_type=True,
    )
    with context.begin_transaction():
        context.run_migrations()


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
