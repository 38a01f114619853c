"""Export a study as a workbook, CSV, the JSON study file or a PDF report.

Rendering the PDF needs the app's template environment (its filters and the cautions); callers
pass it in, so this service never imports the web layer.
"""

import ctypes
import ctypes.util
import gc
import re
import tempfile
import unicodedata
from collections.abc import Iterator
from dataclasses import dataclass
from datetime import UTC, datetime
from enum import StrEnum
from itertools import islice
from pathlib import Path
from typing import IO, Any

import orjson
from jinja2 import Environment
from sqlmodel import Session, col, func, select
from sqlmodel.sql.expression import SelectOfScalar

from app.db.ids import read_row_id
from app.db.models import Scenario, Study
from app.services.exchange.export_csv import write_csv
from app.services.exchange.export_source import stored_scenarios
from app.services.exchange.export_tables import (
    SCENARIO_COLUMNS,
    scenario_rows,
    stored_figure_entries,
)
from app.services.exchange.export_workbook import write_study_workbook
from app.services.exchange.report_source import (
    get_frozen_revision,
    working_copy_label,
    write_report_pdf,
)
from app.services.exchange.report_summary import SUMMARY_ROWS, ReportKind
from app.services.exchange.study_file import export_study
from app.services.study import results, spread
from app.services.study.bulk_results import no_cycle_collection
from app.services.study.tree import NotFoundError, get_study

# Caches keyed per scenario that a whole-study pass fills (see release_memory).
STUDY_SIZED_CACHES = (results.assess, results.compute_cached,
                      results._assessment_of_row_tuple, spread._lines)


class ExportFormat(StrEnum):
    """The file formats a study exports to."""

    XLSX = "xlsx"
    CSV = "csv"
    JSON = "json"
    PDF = "pdf"


@dataclass(frozen=True)
class FormatInfo:
    """How a format is offered: its name, media type and what the file holds."""

    format: ExportFormat
    label: str
    media_type: str
    description: str


FORMATS = (
    FormatInfo(ExportFormat.XLSX, "Workbook (.xlsx)",
               "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
               "An About sheet (revision, sign-off, cautions), then scenarios, steps with their "
               "basis, actions, criteria, attendance, the change log, safeguards not credited, "
               "scenario notes, IPL warnings with sources, added functions, the estimate rounds, "
               "each estimate and the team word scale, each on its own sheet. Numbers are real "
               "numbers."),
    FormatInfo(ExportFormat.CSV, "Scenario table (.csv)", "text/csv; charset=utf-8",
               "One row per scenario with the same columns as the workbook's Scenarios sheet. "
               "UTF-8 with a byte-order mark, so spreadsheet programs read every script; the "
               "last row holds the cautions."),
    FormatInfo(ExportFormat.JSON, "Study file (.json)", "application/json",
               "The whole study with its estimate rounds and word scale, its change log, "
               "revisions and the cautions in the versioned "
               "study-file format. Import it back from the study list or with `tallyroom import`."),
    FormatInfo(ExportFormat.PDF, "Report (.pdf)", "application/pdf",
               "A printable report: cover, scope and criteria, attendance, every scenario's steps "
               "with basis and warnings, ladders, the risk picture, the actions, the added "
               "functions and the warnings by rule. Built in the background, its progress "
               "shown. The summary beside it stays a few pages at any size: criteria, risk "
               "picture, added functions, "
               f"actions and the {SUMMARY_ROWS} scenarios furthest short of target."),
)  # fmt: skip
FORMAT_INFO = {info.format: info for info in FORMATS}


CHUNK_BYTES = 1 << 16


Piece = bytes | memoryview
"""A piece of a file as sent: bytes, or a view of a larger text (not copied)."""


@dataclass(frozen=True)
class Pieces:
    """A file written as it is sent: its pieces, made when read (once)."""

    pieces: Iterator[Piece]


@dataclass(frozen=True)
class ExportFile:
    """A finished export: the name to save it under, its media type and its bytes, held in
    memory, in a temporary file that `chunks` reads out (a spreadsheet of any size), or
    written piece by piece as it is sent (the JSON study file)."""

    filename: str
    media_type: str
    body: bytes | IO[bytes] | Pieces

    @property
    def content(self) -> bytes:
        """The whole file as bytes (the command line and tests); a temporary file or the
        pieces are read once (the file closed) and the bytes kept."""
        if isinstance(self.body, bytes):
            return self.body
        if isinstance(self.body, Pieces):
            whole = b"".join(self.body.pieces)
            object.__setattr__(self, "body", whole)  # frozen: the same content, now whole
            return whole
        with self.body as source:
            source.seek(0)
            whole = source.read()
        object.__setattr__(self, "body", whole)  # frozen: the same content, now in memory
        return whole

    def chunks(self) -> Iterator[Piece]:
        """The file in pieces for a streamed download; a temporary file is closed after."""
        if isinstance(self.body, bytes):
            yield self.body
            return
        if isinstance(self.body, Pieces):
            yield from self.body.pieces
            return
        with self.body as source:
            source.seek(0)
            while chunk := source.read(CHUNK_BYTES):
                yield chunk


@dataclass(frozen=True)
class ExportPage:
    """The export page: the study and the formats on offer."""

    study: Study
    formats: tuple[FormatInfo, ...]
    filenames: dict[str, str]


def read_export_page(*, session: Session, study_id: int) -> ExportPage:
    """The study and, for each format, the file name a download gets."""
    study = get_study(session, study_id)
    names = {str(info.format): export_filename(study, info.format) for info in FORMATS}
    return ExportPage(study, FORMATS, names)


def export_filename(study: Study, export_format: ExportFormat) -> str:
    """A safe ASCII file name: 'tallyroom-7-unit-40-solvent-recovery.xlsx'."""
    ascii_title = unicodedata.normalize("NFKD", study.title).encode("ascii", "ignore").decode()
    slug = re.sub(r"[^a-z0-9]+", "-", ascii_title.lower()).strip("-")[:60].rstrip("-")
    return f"tallyroom-{study.id}{'-' + slug if slug else ''}.{export_format}"


def report_filename(*, session: Session, study_id: int, revision_id: int | None,
                    kind: ReportKind = ReportKind.FULL) -> str:
    """The report's file name; a revision's carries its label ('…-rev-a.pdf'), a summary
    says so ('…-summary.pdf', '…-rev-a-summary.pdf')."""
    stem = export_filename(get_study(session, study_id), ExportFormat.PDF).removesuffix(".pdf")
    if revision_id is not None:
        label = get_frozen_revision(session, study_id, revision_id).label
        slug = re.sub(r"[^a-z0-9]+", "-", unicodedata.normalize("NFKD", label).encode(
            "ascii", "ignore").decode().lower()).strip("-")
        stem += f"-{slug}" if slug else "-revision"
    return stem + ("-summary" if kind is ReportKind.SUMMARY else "") + ".pdf"


def study_json_bytes(data: dict[str, Any]) -> bytes:
    """A study file as compact UTF-8 JSON: every character as itself, no indentation (a
    10,000-scenario study is a third of its indented size), written by orjson (a fifth of
    json.dumps' time; each float in its shortest round-trip form, 1e-05 as 0.00001, the same
    number); `python -m json.tool` shows it indented."""
    return orjson.dumps(data, option=orjson.OPT_APPEND_NEWLINE)


FIGURES_PER_PIECE = 500
# Raw texts orjson writes as they are (see study_json_pieces).
OPEN_LIST = orjson.Fragment(b"[")
NOTHING_BEFORE: list[Any] = []
COMMA_BEFORE: list[Any] = [orjson.Fragment(b"")]  # dumped as "[," before the entries


def study_json_pieces(session: Session, study_id: int, cautions: str) -> Iterator[Piece]:
    """The JSON export in pieces, byte for byte `study_json_bytes` of the whole (the study,
    its cautions, then computed_figures): the study goes out while `computed_figures` is
    still being read, FIGURES_PER_PIECE scenarios of it at a time from the stored results,
    so the download starts earlier and the entries are never all held at once.

    Each piece is orjson's text sent as a view, never copied (the study is most of a large
    file): a raw `[` written as the last key's value and the object's `}` left off leaves it
    open, and a batch's list begins with an empty raw element, so its text without the
    brackets is its entries with the comma that follows the previous batch. The cycle
    collector is paused while the study's dicts and each batch are built (they hold no
    cycles; it spent a quarter of the export walking them)."""
    with no_cycle_collection():
        head = orjson.dumps({**export_study(session, study_id), "cautions": cautions,
                             "computed_figures": OPEN_LIST})
    yield memoryview(head)[:-1]  # without the object's closing brace
    figures, lead = stored_figure_entries(session, study_id), NOTHING_BEFORE
    while True:
        with no_cycle_collection():
            batch = list(islice(figures, FIGURES_PER_PIECE))
            text = orjson.dumps(lead + batch) if batch else b""
        if not batch:
            break
        yield memoryview(text)[1:-1]  # the entries without the list's brackets
        lead = COMMA_BEFORE
    yield b"]}\n"


REQUEST_REPORT_SCENARIOS = 200
"""The largest study whose full report `/export.pdf` builds in the request: a few seconds
(DEVELOPERS.md, "PDF report"). A larger one is built in the background from the export page,
so one download never holds a server thread for half a minute."""


class ReportTooLargeError(ValueError):
    """A study too large for its report to be built in the request; says where to get it."""


def check_report_in_request(session: Session, study_id: int) -> None:
    """ReportTooLargeError, in words, when the study's full report is too large to build in
    the request (`REQUEST_REPORT_SCENARIOS`); NotFoundError when there is no such study."""
    get_study(session, study_id)
    count = int(session.exec(select(func.count()).select_from(Scenario)
                             .where(Scenario.study_id == study_id)).one())
    if count > REQUEST_REPORT_SCENARIOS:
        raise ReportTooLargeError(
            f"This study has {count:,} scenarios: a full report of more than "
            f"{REQUEST_REPORT_SCENARIOS:,} is built in the background, so the server stays "
            "quick for everyone meanwhile. Choose \u201cBuild the full report\u201d below to "
            "follow its progress and download it when it is ready (or \u201cBuild the "
            "summary\u201d for a few pages), or run the command line shown beside it.")


def report_pdf_bytes(session: Session, study_id: int, *, env: Environment,
                     when: datetime) -> bytes:
    """The full report of the live study, built here and now (for scripts and the command
    line; the export page builds it in the background), laid out part by part as there."""
    with tempfile.TemporaryDirectory(prefix="tallyroom-report-") as folder:
        target = Path(folder) / "report.pdf"
        write_report_pdf(session, study_id, target, env=env, when=when)
        return target.read_bytes()


def build_export(
    *, session: Session, study_id: int, export_format: ExportFormat, env: Environment
) -> ExportFile:
    """Export one study in one format; NotFoundError when there is no such study."""
    info = FORMAT_INFO[export_format]
    name = export_filename(get_study(session, study_id), export_format)
    # Each format loads only what it writes: the file needs no computed tree, the CSV no history.
    cautions: str = env.globals["cautions"]  # type: ignore[assignment]
    if export_format is ExportFormat.JSON:  # written while it is sent (the route streams it)
        return ExportFile(name, info.media_type,
                          Pieces(study_json_pieces(session, study_id, cautions)))
    now = datetime.now(UTC).replace(microsecond=0)
    if export_format is ExportFormat.PDF:
        return ExportFile(name, info.media_type, report_pdf_bytes(session, study_id, env=env,
                                                                  when=now))
    target = tempfile.TemporaryFile()  # noqa: SIM115 - ExportFile.chunks closes it
    if export_format is ExportFormat.CSV:
        scenarios = stored_scenarios(session, study_id, with_rows=False)
        write_csv(target, SCENARIO_COLUMNS, scenario_rows(scenarios), cautions=cautions)
    else:
        revision = f"{working_copy_label(session, study_id)}: working copy, not signed"
        write_study_workbook(session, study_id, target, cautions=cautions,
                             exported_at=now.replace(tzinfo=None), revision=revision)
    return ExportFile(name, info.media_type, target)


def release_memory() -> None:
    """Hand the memory a large download used back to the system (run after it is sent).

    A study-sized pass leaves the results core's per-scenario caches full (a rebuild of the
    stored results fills them with every scenario; since the stored results, nothing reads a
    whole study through them again), then the cycles are collected and glibc is asked to
    return its free pages (malloc_trim; elsewhere, nothing to do). Without this the server
    keeps the peak of its largest download as resident memory."""
    for cache in STUDY_SIZED_CACHES:
        cache.cache_clear()
    gc.collect()
    name = ctypes.util.find_library("c")
    trim = getattr(ctypes.CDLL(name), "malloc_trim", None) if name else None
    if trim is not None:
        trim(0)


def studies_titled(title: str) -> SelectOfScalar[Study]:
    """Studies whose title is exactly `title`, oldest first."""
    return select(Study).where(Study.title == title).order_by(col(Study.id))


def find_study(*, session: Session, key: str) -> Study:
    """The study with this id, else the one study with exactly this title, else NotFoundError."""
    study_id = read_row_id(key)
    if study_id is not None and (study := session.get(Study, study_id)) is not None:
        return study
    matches = list(session.exec(studies_titled(key)).all())
    if len(matches) == 1:
        return matches[0]
    if matches:
        ids = ", ".join(str(s.id) for s in matches)
        raise NotFoundError(f"{len(matches)} studies are titled '{key}' (ids {ids}); "
                            f"give the id instead.")
    raise NotFoundError(f"There is no study with id or exact title '{key}'.")
