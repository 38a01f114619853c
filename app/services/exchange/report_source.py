"""What a report is made of: the live study, or a frozen revision read back from its snapshot.

A revision's snapshot is a study file; it is imported into a private in-memory database, so the
report of Rev A is computed by exactly the code that computes the live one, from Rev A's own
steps and criteria, and nothing is written to the study's database.
"""

from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path

from jinja2 import Environment
from pypdf import PdfReader
from sqlmodel import Session, SQLModel

from app.db.models import Revision, latest_revision_label
from app.db.session import build_db_engine
from app.services.exchange.export_tables import StudyData
from app.services.exchange.report import Signature, build_report, report_html
from app.services.exchange.report_layout import html_to_pdf_file
from app.services.exchange.report_parts import PartProgress, build_report_pdf
from app.services.exchange.report_summary import ReportKind, build_summary, summary_html
from app.services.exchange.study_file import export_study
from app.services.exchange.study_import import import_study_text
from app.services.study.tree import NotFoundError, StudyTree, get_study, load_study_tree

Progress = Callable[[int, str], None]


def _quiet(_percent: int, _step: str) -> None:
    return None


@dataclass(frozen=True)
class ReportSource:
    """A loaded study ready to report: its tree, its study file and whose record it is."""

    tree: StudyTree
    data: StudyData
    signature: Signature


def get_frozen_revision(session: Session, study_id: int, revision_id: int) -> Revision:
    """The study's revision, or NotFoundError."""
    revision = session.get(Revision, revision_id)
    if revision is None or revision.study_id != study_id:
        raise NotFoundError(f"There is no revision {revision_id} of this study.")
    return revision


def working_copy_label(session: Session, study_id: int) -> str:
    """'Draft A', or 'working copy since Rev A' once a revision has been frozen."""
    study = get_study(session, study_id)
    latest = latest_revision_label(study)
    return f"working copy since {latest}" if latest else study.revision_label


@contextmanager
def report_source(session: Session, study_id: int,
                  revision_id: int | None = None) -> Iterator[ReportSource]:
    """The live study (signed as the working copy) or a frozen revision (with its label and
    sign-off), loaded for as long as the block runs (a revision's scratch database with it)."""
    if revision_id is None:
        yield ReportSource(load_study_tree(session, study_id), export_study(session, study_id),
                           Signature(working_copy_label(session, study_id)))
        return
    revision = get_frozen_revision(session, study_id, revision_id)
    signature = Signature(revision.label, revision.signed_off_by, revision.signed_off_at)
    scratch_engine = build_db_engine("sqlite://")
    SQLModel.metadata.create_all(scratch_engine)
    try:
        with Session(scratch_engine) as scratch:
            frozen_id = import_study_text(scratch, revision.snapshot).id or 0
            yield ReportSource(load_study_tree(scratch, frozen_id),
                               export_study(scratch, frozen_id), signature)
    finally:
        scratch_engine.dispose()


def _report_html(source: ReportSource, *, env: Environment, when: datetime,
                 kind: ReportKind, progress: Progress) -> str:
    if kind is ReportKind.SUMMARY:
        progress(30, "computing the risk picture")
        return summary_html(build_summary(source.tree, source.data, when=when,
                                          signature=source.signature), env=env)
    progress(30, "computing every scenario and check")
    return report_html(build_report(source.tree, source.data, when=when,
                                    signature=source.signature), env=env)


def live_report_html(session: Session, study_id: int, *, env: Environment, when: datetime,
                     progress: Progress = _quiet, kind: ReportKind = ReportKind.FULL) -> str:
    """The live study's report (full or summary) as one HTML document, signed as the working
    copy."""
    progress(10, "reading the study")
    with report_source(session, study_id) as source:
        return _report_html(source, env=env, when=when, kind=kind, progress=progress)


def revision_report_html(session: Session, study_id: int, revision_id: int, *,
                         env: Environment, when: datetime, progress: Progress = _quiet,
                         kind: ReportKind = ReportKind.FULL) -> str:
    """A frozen revision's report (full or summary) as HTML, with its label and sign-off."""
    progress(10, "reading the revision")
    with report_source(session, study_id, revision_id) as source:
        return _report_html(source, env=env, when=when, kind=kind, progress=progress)


def write_report_pdf(session: Session, study_id: int, target: Path, *, env: Environment,
                     when: datetime, revision_id: int | None = None,
                     kind: ReportKind = ReportKind.FULL,
                     progress: PartProgress | None = None, workers: int = 1) -> int:
    """Write the report (full: laid out part by part, by `workers` processes side by side
    when above 1; summary: one short document) of the live study or a frozen revision into
    `target`; its number of pages."""
    with report_source(session, study_id, revision_id) as source:
        if kind is ReportKind.SUMMARY:
            if progress is not None:
                progress(0, 1, "the summary")
            html_to_pdf_file(summary_html(build_summary(
                source.tree, source.data, when=when, signature=source.signature), env=env),
                target)
            return len(PdfReader(target).pages)
        report = build_report(source.tree, source.data, when=when, signature=source.signature)
        return build_report_pdf(report, target, env=env, progress=progress, workers=workers)
