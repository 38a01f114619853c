"""Sub-commands that keep the data safe: backup, restore, export-all."""

import argparse
import sys
from collections.abc import Callable
from pathlib import Path

from sqlmodel import Session

from app.db.backups import (
    MANUAL,
    POSTGRESQL_ADVICE,
    BackupError,
    backups_folder,
    check_database,
    copy_database,
    restore_database,
    sqlite_file,
    take_backup,
)
from app.settings import get_settings


def _configured_sqlite_file(command: str) -> Path | None:
    database = sqlite_file(get_settings().database_url)
    if database is None:
        print(f"tallyroom {command}: {POSTGRESQL_ADVICE}", file=sys.stderr)
    return database


def cmd_backup(args: argparse.Namespace) -> int:
    """Write a consistent copy of the SQLite database (to --out, or the backups folder)."""
    database = _configured_sqlite_file("backup")
    if database is None:
        return 2
    try:
        if args.out:
            target = Path(args.out)
            copy_database(database, target)
        else:
            target = take_backup(database, MANUAL)
        check_database(target)
    except BackupError as err:
        print(f"tallyroom backup: {err}", file=sys.stderr)
        return 2
    print(f"wrote {target} ({target.stat().st_size:,} bytes), a consistent copy of {database}")
    return 0


def cmd_restore(args: argparse.Namespace) -> int:
    """Replace the database with a backup, after asking; the current one is copied first."""
    database = _configured_sqlite_file("restore")
    if database is None:
        return 2
    backup = Path(args.file)
    try:
        check_database(backup)
    except BackupError as err:
        print(f"tallyroom restore: nothing changed: {err}", file=sys.stderr)
        return 2
    if not args.yes and not _confirmed(backup, database):
        print("tallyroom restore: nothing changed")
        return 1
    return _restore(backup, database)


def _confirmed(backup: Path, database: Path) -> bool:
    question = (f"Replace the database {database} with {backup}? The current database is "
                f"copied to {backups_folder(database)} first. Stop the server before. [y/N] ")
    try:
        return input(question).strip().lower() in ("y", "yes")
    except EOFError:
        return False


def _restore(backup: Path, database: Path) -> int:
    from app.db.migrate import upgrade_database

    if database.is_file():
        kept = take_backup(database, "before-restore", keep=max(get_settings().backup_keep, 1))
        print(f"copied the current database to {kept}")
    restore_database(backup, database)
    upgrade_database()  # a copy from an older version is brought to the newest schema
    print(f"restored {database} from {backup}; start the server again to use it")
    return 0


def cmd_export_all(args: argparse.Namespace) -> int:
    """Write every study's study file into one zip archive."""
    from app.archive import write_all_studies
    from app.db.session import get_db_engine

    out = Path(args.out)
    with Session(get_db_engine()) as session:
        names = write_all_studies(session, out)
    print(f"wrote {out} ({out.stat().st_size:,} bytes), studies: {len(names)}")
    return 0


def add_data_commands(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    """Add backup, restore and export-all to the `tallyroom` parser."""
    backup = sub.add_parser("backup", help="write a consistent copy of the SQLite database")
    backup.add_argument("--out", help="file to write (default: a new file in the backups folder)")
    restore = sub.add_parser("restore", help="replace the SQLite database with a backup copy")
    restore.add_argument("file", help="a copy written by `tallyroom backup` or by the server")
    restore.add_argument("--yes", action="store_true", help="do not ask (for scripts)")
    export_all = sub.add_parser("export-all", help="write every study into one .zip archive")
    export_all.add_argument("--out", required=True, help="the .zip file to write")


DATA_COMMANDS: dict[str, Callable[[argparse.Namespace], int]] = {
    "backup": cmd_backup, "restore": cmd_restore, "export-all": cmd_export_all,
}
