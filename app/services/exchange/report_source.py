"""What a report is made of: the live study, or a frozen revision read back from its snapshot.

A revision's snapshot is a study file; it is imported into a private in-memory database, so the
report of Rev A is computed by exactly the code that computes the live one, from Rev A's own
steps and criteria, and nothing is written to the study's database.
"""

from collections.abc import Callable
from datetime import datetime

from jinja2 import Environment
from sqlmodel import Session, SQLModel

from app.db.models import Revision, latest_revision_label
from app.db.session import build_db_engine
from app.services.exchange.export_tables import StudyData
from app.services.exchange.report import Signature, build_report, report_html
from app.services.exchange.report_summary import ReportKind, build_summary, summary_html
from app.services.exchange.study_file import export_study
from app.services.exchange.study_import import import_study_text
from app.services.study.tree import NotFoundError, StudyTree, get_study, load_study_tree

Progress = Callable[[int, str], None]


def _quiet(_percent: int, _step: str) -> None:
    return None


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


def _report_html(tree: StudyTree, data: StudyData, *, env: Environment, when: datetime,
                 signature: Signature, kind: ReportKind, progress: Progress) -> str:
    if kind is ReportKind.SUMMARY:
        progress(30, "computing the risk picture")
        return summary_html(build_summary(tree, data, when=when, signature=signature), env=env)
    progress(30, "computing every scenario and check")
    return report_html(build_report(tree, data, when=when, signature=signature), env=env)


def live_report_html(session: Session, study_id: int, *, env: Environment, when: datetime,
                     progress: Progress = _quiet, kind: ReportKind = ReportKind.FULL) -> str:
    """The live study's report (full or summary) as HTML, signed as the working copy."""
    progress(10, "reading the study")
    tree = load_study_tree(session, study_id)
    data = export_study(session, study_id)
    return _report_html(tree, data, env=env, when=when, kind=kind, progress=progress,
                        signature=Signature(working_copy_label(session, study_id)))


def revision_report_html(session: Session, study_id: int, revision_id: int, *,
                         env: Environment, when: datetime, progress: Progress = _quiet,
                         kind: ReportKind = ReportKind.FULL) -> str:
    """A frozen revision's report (full or summary) as HTML, with its label and sign-off."""
    revision = get_frozen_revision(session, study_id, revision_id)
    signature = Signature(revision.label, revision.signed_off_by, revision.signed_off_at)
    progress(10, f"reading revision {revision.label}")
    scratch_engine = build_db_engine("sqlite://")
    SQLModel.metadata.create_all(scratch_engine)
    try:
        with Session(scratch_engine) as scratch:
            frozen = import_study_text(scratch, revision.snapshot)
            frozen_id = frozen.id or 0
            tree = load_study_tree(scratch, frozen_id)
            return _report_html(tree, export_study(scratch, frozen_id), env=env, when=when,
                                signature=signature, kind=kind, progress=progress)
    finally:
        scratch_engine.dispose()
