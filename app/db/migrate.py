"""Bringing a database to the newest migration, with a backup first when there is one to take."""

from pathlib import Path

from alembic import command
from alembic.config import Config
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory

from app.db.backups import sqlite_file, take_backup
from app.db.session import build_db_engine
from app.settings import PROJECT_ROOT, get_settings


def alembic_config() -> Config:
    """Alembic configured from pyproject.toml's [tool.alembic]."""
    return Config(toml_file=str(PROJECT_ROOT / "pyproject.toml"))


def pending_migrations(database_url: str) -> bool:
    """True when the database is behind the newest migration (or has none yet)."""
    heads = set(ScriptDirectory.from_config(alembic_config()).get_heads())
    db_engine = build_db_engine(database_url)
    try:
        with db_engine.connect() as connection:
            current = set(MigrationContext.configure(connection).get_current_heads())
    finally:
        db_engine.dispose()
    return current != heads


def upgrade_database() -> Path | None:
    """Migrate the configured database to head; return the backup taken before, if any.

    An SQLite database that holds data and is behind gets a "before-migration" copy in its
    backups folder first, so a migration that goes wrong costs nothing.
    """
    settings = get_settings()
    database = sqlite_file(settings.database_url)
    backup = None
    if database is not None and database.is_file() and database.stat().st_size > 0 \
            and pending_migrations(settings.database_url):
        backup = take_backup(database, "before-migration", keep=max(settings.backup_keep, 1))
    command.upgrade(alembic_config(), "head")
    return backup
