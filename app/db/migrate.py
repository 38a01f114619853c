"""Bringing a database to the newest migration, with a backup first when there is one to take."""

from pathlib import Path

from alembic import command
from alembic.config import Config
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import make_url

from app.db.backups import sqlite_file, take_backup
from app.db.session import build_db_engine
from app.settings import PROJECT_ROOT, get_settings


def alembic_config() -> Config:
    """Alembic configured from pyproject.toml's [tool.alembic]."""
    return Config(toml_file=str(PROJECT_ROOT / "pyproject.toml"))


def current_revisions(database_url: str) -> set[str]:
    """The migrations the database is at (empty for a new or empty database)."""
    db_engine = build_db_engine(database_url)
    try:
        with db_engine.connect() as connection:
            return set(MigrationContext.configure(connection).get_current_heads())
    finally:
        db_engine.dispose()


def pending_migrations(database_url: str) -> bool:
    """True when the database is behind the newest migration (or has none yet)."""
    heads = set(ScriptDirectory.from_config(alembic_config()).get_heads())
    return current_revisions(database_url) != heads


def database_is_new(database_url: str) -> bool:
    """True for a database with no migrations yet; an SQLite file that is not there (or is
    empty) is told without opening it, which would create it."""
    database = sqlite_file(database_url)
    if database is not None and (not database.is_file() or database.stat().st_size == 0):
        return True
    return not current_revisions(database_url)


def database_place(database_url: str) -> str:
    """Where the database lives, said for people: the SQLite file, or the server URL with
    its password hidden."""
    database = sqlite_file(database_url)
    if database is not None:
        return str(database)
    return make_url(database_url).render_as_string(hide_password=True)


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
