"""Revisions: freeze the study as a named, signed-off snapshot; view and compare snapshots."""

from dataclasses import dataclass, field
from typing import Any

from sqlmodel import Session, col, select

from app.db.ids import read_row_id
from app.db.models import ChangeLogEntry, Revision, Study, text_limit, utc_now
from app.db.snapshot_store import load_snapshot
from app.db.tracking import SUPPRESS_LOG_KEY
from app.services.exchange.study_file import export_study
from app.services.record.comparison import (
    MATCHING_RULE,
    ScenarioNumbers,
    StudyDiff,
    categories_by_ref,
    diff_studies,
    scenario_numbers,
)
from app.services.record.freeze_parts import freeze_snapshot
from app.services.study.errors import FieldInputError, length_problem
from app.services.study.tree import NotFoundError, get_study

# Any in this module: a revision's snapshot is a study file's JSON (the file boundary).

LIVE = "live"
LIMITS = {field: text_limit(Revision, field) for field in ("label", "note", "signed_off_by")}


class RevisionInputError(FieldInputError):
    """Bad input for freezing or comparing: `field` is the form field, `message` the rule."""


def _revisions(session: Session, study_id: int) -> list[Revision]:
    statement = select(Revision).where(Revision.study_id == study_id)
    return list(session.exec(statement.order_by(col(Revision.id).desc())).all())


def _read_freeze_form(session: Session, study_id: int, values: dict[str, str]) -> dict[str, str]:
    cleaned = {name: values.get(name, "").strip() for name in LIMITS}
    if not cleaned["label"]:
        raise RevisionInputError("label", "a revision label is required, e.g. 'Rev A'.")
    if not cleaned["signed_off_by"]:
        raise RevisionInputError("signed_off_by", "say who signed this revision off.")
    for name, limit in LIMITS.items():
        if problem := length_problem(cleaned[name], limit):
            raise RevisionInputError(name, problem)
    taken = {r.label.casefold() for r in _revisions(session, study_id)}
    if cleaned["label"].casefold() in taken:
        raise RevisionInputError("label", f"this study already has a revision "
                                          f"'{cleaned['label']}'; labels are unique in a study.")
    return cleaned


def freeze_revision(
    *, session: Session, study_id: int, values: dict[str, str], frozen_by: str
) -> Revision:
    """Store the study as it is now, read-only, with who froze it and who signed it off."""
    get_study(session, study_id)
    cleaned = _read_freeze_form(session, study_id, values)
    # Only the parts the study does not hold yet are written: an unchanged node costs its
    # digest, and a node unchanged since this process last froze the study is not even built.
    manifest = freeze_snapshot(session, study_id)
    now = utc_now()
    revision = Revision(study_id=study_id, label=cleaned["label"], note=cleaned["note"],
                        frozen_at=now, frozen_by=frozen_by, signed_off_by=cleaned["signed_off_by"],
                        signed_off_at=now, snapshot_parts=manifest)
    session.add(revision)
    session.flush()
    if not session.info.get(SUPPRESS_LOG_KEY):
        session.add(ChangeLogEntry(
            study_id=study_id, author=frozen_by, action="freeze", entity="revision",
            entity_id=revision.id, summary=f"revision '{revision.label}' frozen, signed off by "
                                           f"{revision.signed_off_by}"))
    session.commit()
    session.refresh(revision)
    return revision


@dataclass(frozen=True)
class RevisionsPage:
    """The study's revisions, newest first."""

    study: Study
    revisions: list[Revision]


def list_revisions(*, session: Session, study_id: int) -> RevisionsPage:
    """Every revision of the study, newest first."""
    return RevisionsPage(get_study(session, study_id), _revisions(session, study_id))


def get_revision(*, session: Session, study_id: int, revision_id: int) -> Revision:
    """One revision of the study, or NotFoundError."""
    revision = session.get(Revision, revision_id)
    if revision is None or revision.study_id != study_id:
        raise NotFoundError(f"There is no revision {revision_id} of this study.")
    return revision


@dataclass(frozen=True)
class FrozenScenario:
    """A scenario as frozen, with numbers recomputed from the snapshot's own steps."""

    deviation: str
    scenario: dict[str, Any]
    severity: str
    numbers: ScenarioNumbers


@dataclass(frozen=True)
class FrozenNode:
    """A node of the snapshot with its scenarios."""

    node: dict[str, Any]
    scenarios: list[FrozenScenario] = field(default_factory=list)


@dataclass(frozen=True)
class FrozenPage:
    """A revision rendered read-only from its snapshot."""

    study: Study
    revision: Revision
    snapshot: dict[str, Any]
    nodes: list[FrozenNode]


def _governing_name(scenario: dict[str, Any], categories: dict[str, dict[str, Any]]) -> str:
    rated = [categories[ref] for ref in (scenario.get("severity"),
             scenario.get("environment_severity"), scenario.get("asset_severity"))
             if ref in categories]
    governing = min(rated, key=lambda c: c["tolerable_frequency"], default=None)
    return governing["name"] if governing else "—"


def frozen_nodes(snapshot: dict[str, Any]) -> list[FrozenNode]:
    """The snapshot's nodes with every scenario computed as it stood."""
    categories = categories_by_ref(snapshot)
    nodes = []
    for node in snapshot.get("nodes", []):
        frozen = FrozenNode(node)
        for deviation in node.get("deviations", []):
            label = f"{deviation['guideword']} {deviation['parameter']}"
            frozen.scenarios.extend(
                FrozenScenario(label, scenario, _governing_name(scenario, categories),
                               scenario_numbers(scenario, categories))
                for scenario in deviation.get("scenarios", []))
        nodes.append(frozen)
    return nodes


def read_frozen(*, session: Session, study_id: int, revision_id: int) -> FrozenPage:
    """A revision's snapshot, ready to show read-only."""
    study = get_study(session, study_id)
    revision = get_revision(session=session, study_id=study_id, revision_id=revision_id)
    snapshot = load_snapshot(session, revision)
    return FrozenPage(study, revision, snapshot, frozen_nodes(snapshot))


@dataclass(frozen=True)
class ComparePage:
    """Two versions side by side: what changed and what it did to each scenario's numbers."""

    study: Study
    revisions: list[Revision]
    typed_from: str
    typed_to: str
    from_label: str = ""
    to_label: str = ""
    diff: StudyDiff | None = None
    error_field: str = ""
    error: str = ""
    matching_rule: str = MATCHING_RULE


def _pick(session: Session, study_id: int, field_name: str, typed: str) -> Revision:
    if not typed.strip():
        raise RevisionInputError(field_name, "choose a revision to compare.")
    revision_id = read_row_id(typed)
    if revision_id is None:
        raise RevisionInputError(
            field_name, f"a revision is chosen by its number (got '{typed.strip()}').")
    revision = session.get(Revision, revision_id)
    if revision is None or revision.study_id != study_id:
        raise RevisionInputError(field_name, f"there is no revision {revision_id} of this study.")
    return revision


def build_comparison_page(
    *, session: Session, study_id: int, typed_from: str, typed_to: str
) -> ComparePage:
    """Compare a revision with another revision or with the live study ('live')."""
    study = get_study(session, study_id)
    revisions = _revisions(session, study_id)
    older = _pick(session, study_id, "from", typed_from)
    if typed_to.strip().casefold() in ("", LIVE):
        newer, to_label = export_study(session, study_id, with_history=False), "the live study"
    else:
        picked = _pick(session, study_id, "to", typed_to)
        newer, to_label = load_snapshot(session, picked), f"revision {picked.label}"
    diff = diff_studies(load_snapshot(session, older), newer)
    return ComparePage(study, revisions, typed_from, typed_to, f"revision {older.label}",
                       to_label, diff)


def invalid_compare_page(*, session: Session, study_id: int, typed_from: str, typed_to: str,
                         error: RevisionInputError) -> ComparePage:
    """The comparison form again, with the typed choice and the error; no comparison."""
    return ComparePage(get_study(session, study_id), _revisions(session, study_id), typed_from,
                       typed_to, error_field=error.field, error=error.message)
