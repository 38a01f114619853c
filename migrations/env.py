"""Alembic environment: the URL comes from the app's settings, the schema from its models."""

from alembic import context
from sqlalchemy import Connection
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
    """Run migrations on a fresh connection to the configured database."""
    db_engine = build_db_engine(get_settings().database_url)
    with db_engine.connect() as fresh:
        _run_on(fresh)
    db_engine.dispose()


def _run_on(connection: Connection) -> None:
    context.configure(
        connection=connection,
        target_metadata=target_metadata,
        render_as_batch=True,
        compare_type=True,
    )
    on_sqlite = connection.dialect.name == "sqlite"
    if on_sqlite:
        _sqlite_foreign_keys(connection, enabled=False)
    try:
        with context.begin_transaction():
            context.run_migrations()
            if on_sqlite:
                _check_sqlite_foreign_keys(connection)
    finally:
        if on_sqlite:
            _sqlite_foreign_keys(connection, enabled=True)


def _sqlite_foreign_keys(connection: Connection, *, enabled: bool) -> None:
    # SQLite's procedure for rebuilding a table (sqlite.org/lang_altertable.html, "other kinds
    # of table schema changes"): foreign keys off outside the transaction, so dropping a parent
    # table during a batch rebuild cascades nowhere; checked before commit instead.
    # The pragma is ignored inside a transaction, hence the commit of the empty one.
    connection.exec_driver_sql(f"PRAGMA foreign_keys={'ON' if enabled else 'OFF'}")
    connection.commit()


def _check_sqlite_foreign_keys(connection: Connection) -> None:
    broken = connection.exec_driver_sql("PRAGMA foreign_key_check").fetchall()
    if broken:
        raise RuntimeError(f"migration left rows pointing at missing parents: {broken[:5]}")


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
