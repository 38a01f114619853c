"""The `tallyroom` command: set up the database, load the demo, serve, export, import."""

import argparse
import getpass
import os
import sys
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sqlmodel import Session

from app.cli_data import DATA_COMMANDS, add_data_commands
from app.db.session import get_db_engine
from app.settings import LOOPBACK_HOSTS, Settings, get_settings

if TYPE_CHECKING:  # imported when first used (module __getattr__ below)
    from app.db.migrate import alembic_config, upgrade_database

__all__ = ["alembic_config", "main", "upgrade_database"]


def __getattr__(name: str) -> Any:
    """`alembic_config` and `upgrade_database` of app.db.migrate, imported when first asked
    for: Alembic is imported only by the commands that migrate (it was a fifth of starting
    `tallyroom import`, and of starting its helper process, which imports this module)."""
    if name in ("alembic_config", "upgrade_database"):
        from app.db import migrate

        return getattr(migrate, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

COMMANDS: dict[str, Callable[[argparse.Namespace], int]] = {}


def cmd_migrate(_args: argparse.Namespace) -> int:
    """Run `alembic upgrade head` on the configured database (after a backup when behind),
    and say which it was: created, brought up to date, or already up to date."""
    from app.db.migrate import (
        database_is_new,
        database_place,
        pending_migrations,
        upgrade_database,
    )

    url = get_settings().database_url
    place = database_place(url)
    was_new = database_is_new(url)
    was_behind = not was_new and pending_migrations(url)
    backup = upgrade_database()
    if backup is not None:
        print(f"backed up the database to {backup} before migrating")
    if was_new:
        print(f"created the database at {place}")
    elif was_behind:
        print(f"brought the database at {place} up to the newest migration")
    else:
        print(f"database at {place} is up to date")
    return 0


def cmd_load_demo(_args: argparse.Namespace) -> int:
    """Load the invented demo study when the database has no studies, and say what it did."""
    from app.demo import load_demo_if_empty

    with Session(get_db_engine()) as session:
        study = load_demo_if_empty(session)
    if study is not None:
        print(f"loaded the invented demo study '{study.title}'")
    else:
        print("demo not loaded because studies exist")
    return 0


def cmd_serve(args: argparse.Namespace) -> int:
    """Serve the app with uvicorn until Ctrl-C or SIGTERM, then stop cleanly (exit 0).

    On the meeting-room network only with a passphrase.
    """
    import signal

    import uvicorn

    from app.access.launch import prepare_network

    if args.lan:
        lan_settings(get_settings())
    settings = get_settings()
    if settings.serves_network:
        with Session(get_db_engine()) as session:
            lines = prepare_network(session, settings)
        if lines is None:
            print("tallyroom serve: refusing to serve the network without a facilitator "
                  "passphrase; set one with `tallyroom passphrase` first.", file=sys.stderr)
            return 2
        print("\n".join(lines), flush=True)
    # uvicorn shuts down gracefully on either signal (the app's lifespan checkpoints and backs
    # up), then raises it again; these handlers let that second raise end the command normally.
    stopped_by: list[int] = []
    for stop_signal in (signal.SIGINT, signal.SIGTERM):
        signal.signal(stop_signal, lambda number, _frame: stopped_by.append(number))
    if not settings.serves_network:
        print(f"Tallyroom is serving on http://{settings.host}:{settings.port}", flush=True)
    uvicorn.run("app.main:create_app", factory=True, host=settings.host, port=settings.port,
                log_level="warning")
    if stopped_by:
        print(f"Tallyroom stopped cleanly ({signal.Signals(stopped_by[0]).name})", flush=True)
    return 0


def lan_settings(settings: Settings) -> None:
    """Switch this process to LAN mode (all interfaces unless a LAN address is configured)."""
    os.environ["TALLYROOM_LAN"] = "1"
    if settings.host in LOOPBACK_HOSTS:
        os.environ["TALLYROOM_HOST"] = "0.0.0.0"
    get_settings.cache_clear()


def cmd_passphrase(args: argparse.Namespace) -> int:
    """Set the facilitator passphrase (asked twice, or one line from standard input)."""
    from app.access.passphrase import PassphraseError
    from app.access.state import set_passphrase

    if args.stdin:
        first = second = sys.stdin.readline().rstrip("\n")
    else:
        first = getpass.getpass("New facilitator passphrase: ")
        second = getpass.getpass("The same again: ")
    if first != second:
        print("tallyroom passphrase: the two entries differ; nothing changed.", file=sys.stderr)
        return 2
    with Session(get_db_engine()) as session:
        try:
            set_passphrase(session, first)
        except PassphraseError as err:
            print(f"tallyroom passphrase: {err} Nothing changed.", file=sys.stderr)
            return 2
    print("facilitator passphrase set (stored as a salted scrypt hash)")
    return 0


def cmd_export(args: argparse.Namespace) -> int:
    """Write one study to a file in the chosen format."""
    from app.routes.rendering import templates
    from app.services.exchange.exports import ExportFormat, build_export, find_study
    from app.services.study.tree import NotFoundError

    with Session(get_db_engine()) as session:
        try:
            study = find_study(session=session, key=args.study)
        except NotFoundError as err:
            print(f"tallyroom export: {err}", file=sys.stderr)
            return 2
        assert study.id is not None
        export = build_export(session=session, study_id=study.id,
                              export_format=ExportFormat(args.format), env=templates.env)
        content = export.content  # the JSON study file is written as it is read: in the session
        title = study.title
    out = Path(args.out or export.filename)
    out.write_bytes(content)
    print(f"wrote {out} ({len(content):,} bytes): study {study.id} '{title}'")
    return 0


def cmd_import(args: argparse.Namespace) -> int:
    """Create a new study from a study file; print its id."""
    from app.db.tracking import install_tracking
    from app.services.exchange.study_file import StudyFileError
    from app.services.exchange.study_import import check_file_size, import_study_upload

    path = Path(args.file)
    try:
        check_file_size(path.stat().st_size)  # a file over the limit is never read
        raw = path.read_bytes()
    except OSError as err:
        print(f"tallyroom import: cannot read {path}: {err.strerror}", file=sys.stderr)
        return 2
    except StudyFileError as err:
        print(f"tallyroom import: {path} not imported: {err}", file=sys.stderr)
        return 2
    install_tracking()
    with Session(get_db_engine()) as session:
        try:
            study = import_study_upload(session=session, raw=raw)
        except StudyFileError as err:
            print(f"tallyroom import: {path} not imported: {err}", file=sys.stderr)
            return 2
    print(study.id)
    return 0


def cmd_delete_study(args: argparse.Namespace) -> int:
    """Delete one study and everything it holds, only when --yes confirms it."""
    from app.services.exchange.exports import find_study
    from app.services.study.listing import delete_study, list_studies
    from app.services.study.tree import NotFoundError

    with Session(get_db_engine()) as session:
        try:
            study = find_study(session=session, key=args.study)
        except NotFoundError as err:
            print(f"tallyroom delete-study: {err}", file=sys.stderr)
            return 2
        listing = next(row for row in list_studies(session=session) if row.study.id == study.id)
        what = (f"study {study.id} '{study.title}' ({listing.node_count} nodes, "
                f"{listing.scenario_count} scenarios, its actions, attendance, change log and "
                f"revisions)")
        if not args.yes:
            print(f"tallyroom delete-study: would delete {what}; nothing deleted. Export it "
                  f"first if you may need it, then repeat with --yes.", file=sys.stderr)
            return 2
        delete_study(session=session, study_id=study.id or 0)
    print(f"deleted {what}")
    return 0


def _add_file_commands(sub: argparse._SubParsersAction) -> None:  # type: ignore[type-arg]
    export = sub.add_parser("export", help="write a study to an .xlsx, .csv, .json or .pdf file")
    export.add_argument("study", help="the study's id or its exact title")
    export.add_argument("--format", required=True, choices=["xlsx", "csv", "json", "pdf"])
    export.add_argument("--out", help="file to write (default: the download's file name, here)")
    importer = sub.add_parser("import", help="create a new study from a study file (.json)")
    importer.add_argument("file", help="a Tallyroom study file, schema version 1 or 2")
    deleter = sub.add_parser("delete-study", help="delete a study and everything it holds")
    deleter.add_argument("study", help="the study's id or its exact title")
    deleter.add_argument("--yes", action="store_true", help="confirm: without it nothing is "
                         "deleted")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser for every sub-command."""
    parser = argparse.ArgumentParser(prog="tallyroom", description=__doc__)
    sub = parser.add_subparsers(dest="command", required=True)
    sub.add_parser("migrate", help="upgrade the database to the newest migration")
    sub.add_parser("load-demo", help="load the invented demo study into an empty database")
    serve = sub.add_parser("serve", help="serve on the configured host and port")
    serve.add_argument("--lan", action="store_true",
                       help="serve the meeting-room network (needs a facilitator passphrase)")
    passphrase = sub.add_parser("passphrase", help="set the facilitator passphrase")
    passphrase.add_argument("--stdin", action="store_true",
                            help="read it from one line of standard input instead of asking")
    for extend in PARSER_EXTENSIONS:
        extend(sub)
    return parser


# Other modules add sub-commands here (for example export and import).
PARSER_EXTENSIONS: list[Callable[[argparse._SubParsersAction], None]] = [  # type: ignore[type-arg]
    _add_file_commands,
    add_data_commands,
]
COMMANDS.update({"migrate": cmd_migrate, "load-demo": cmd_load_demo, "serve": cmd_serve,
                 "passphrase": cmd_passphrase, "export": cmd_export, "import": cmd_import,
                 "delete-study": cmd_delete_study, **DATA_COMMANDS})


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the `tallyroom` command."""
    args = build_parser().parse_args(argv)
    return COMMANDS[args.command](args)


if __name__ == "__main__":
    sys.exit(main())
