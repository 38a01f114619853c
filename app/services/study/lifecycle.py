"""A study's own life: create it (empty or with another study's criteria), edit its heading
fields, say what it holds, delete it.

Copying a whole study goes through the study file (exchange area); this module stays in the
shared core and knows only the study row and its severity categories.
"""

from collections.abc import Mapping
from dataclasses import dataclass, fields
from typing import Any

from sqlmodel import Session, func, select

from app.db.compare_and_set import SaveOutcome
from app.db.ids import read_row_id
from app.db.models import (
    Node,
    Participant,
    Recommendation,
    Scenario,
    SeverityCategory,
    Step,
    Study,
)
from app.db.queries import fetch_rows_of_study
from app.services.study import listing
from app.services.study.conflicts import ConflictError, FieldConflict, PageEdit, save_form
from app.services.study.errors import length_problem
from app.services.study.tree import NotFoundError, get_study

# The study row's own column limits (app/db/models.py, StudyBase).
LIMITS = {"title": 200, "facility": 200, "scope": 5000, "revision_label": 60}
EMPTY_CRITERIA = ""


class StudyFormError(ValueError):
    """A study form that breaks a rule; `errors` maps each field to its message."""

    def __init__(self, errors: dict[str, str]) -> None:
        super().__init__("; ".join(f"{k}: {v}" for k, v in errors.items()))
        self.errors = errors


@dataclass(frozen=True)
class StudyForm:
    """The heading fields as typed, plus where the starting criteria come from."""

    title: str = ""
    facility: str = ""
    scope: str = ""
    revision_label: str = "Draft"
    criteria_from: str = EMPTY_CRITERIA  # "" for none, else another study's id

    @classmethod
    def from_mapping(cls, data: Mapping[str, Any]) -> "StudyForm":
        """Read a posted form (Any: raw form values), trimming each field."""
        return cls(**{f.name: str(data.get(f.name, f.default) or "").strip()
                      for f in fields(cls)})

    @classmethod
    def from_study(cls, study: Study) -> "StudyForm":
        """The form filled with a study's current fields."""
        return cls(title=study.title, facility=study.facility, scope=study.scope,
                   revision_label=study.revision_label)


@dataclass(frozen=True)
class LoadedHeading:
    """What the edit form was loaded with: the study's version and heading fields (sent back
    as `version` and `orig_…`), and after a conflict (409) the fields someone saved since."""

    version: int | None
    fields: StudyForm
    conflicts: tuple[FieldConflict, ...] = ()

    def original(self, name: str) -> str:
        """The loaded text of one heading field."""
        return str(getattr(self.fields, name))


@dataclass(frozen=True)
class StudyContents:
    """What a study holds: named in the delete question."""

    study: Study
    nodes: int
    scenarios: int
    steps: int
    categories: int
    actions: int
    participants: int

    def sentence(self) -> str:
        """'3 nodes, 12 scenarios (40 steps), 4 severity categories, …' (zero counts left out)."""
        parts = [_count(self.nodes, "node"), _count(self.scenarios, "scenario"),
                 _count(self.steps, "step"), _count(self.categories, "severity category"),
                 _count(self.actions, "action"), _count(self.participants, "participant")]
        named = [p for p in parts if p]
        return ", ".join(named) if named else "nothing yet: no nodes, criteria or people"


def _count(number: int, noun: str) -> str:
    if not number:
        return ""
    plural = noun[:-1] + "ies" if noun.endswith("y") else noun + "s"
    return f"{number:,} {noun if number == 1 else plural}"


def validate_study_form(form: StudyForm) -> dict[str, str]:
    """Each field's problem: a title is required, revision label too, lengths as stored."""
    errors: dict[str, str] = {}
    if not form.title:
        errors["title"] = "a study needs a title."
    if not form.revision_label:
        errors["revision_label"] = "give a revision label, for example Draft or A."
    for name, limit in LIMITS.items():
        problem = length_problem(getattr(form, name), limit)
        if problem and name not in errors:
            errors[name] = problem
    return errors


HEADING_FIELDS = ("title", "facility", "scope", "revision_label")


def _heading_values(form: StudyForm) -> dict[str, str]:
    return {name: getattr(form, name) for name in HEADING_FIELDS}


def _criteria_source(session: Session, text: str) -> Study | None:
    if text == EMPTY_CRITERIA:
        return None
    source = session.get(Study, found) if (found := read_row_id(text)) else None
    if source is None:
        raise StudyFormError({"criteria_from": "choose empty criteria or a study from the list."})
    return source


def create_study(*, session: Session, form: StudyForm) -> Study:
    """Write a new study; its criteria start empty or as a copy of the chosen study's."""
    errors = validate_study_form(form)
    if errors:
        raise StudyFormError(errors)
    source = _criteria_source(session, form.criteria_from)
    study = Study(title=form.title, facility=form.facility, scope=form.scope,
                  revision_label=form.revision_label)
    if source is not None:
        study.criteria_basis = source.criteria_basis
        study.frequency_unit = source.frequency_unit
    session.add(study)
    session.flush()
    assert study.id is not None
    if source is not None and source.id is not None:
        # Positions are renumbered so the copy keeps the source's display order even where
        # the source has ties (the database may hand out ids in any order within one insert).
        rows = fetch_rows_of_study(session, SeverityCategory, source.id)
        for position, row in enumerate(rows):
            session.add(SeverityCategory(
                study_id=study.id, name=row.name, description=row.description,
                tolerable_frequency=row.tolerable_frequency, receptor=row.receptor,
                position=position))
    session.commit()
    session.refresh(study)
    return study


def update_study(*, session: Session, study_id: int, form: StudyForm,
                 edit: PageEdit | None = None, resolution: str = "",
                 seen: Mapping[str, str] | None = None) -> Study:
    """Save the heading fields the person changed; a refused form changes nothing, and a field
    someone else saved since the form was loaded raises ConflictError (nothing saved).
    `resolution` ("keep"/"take") answers such a conflict with the values it showed (`seen`)."""
    study = get_study(session, study_id)
    errors = validate_study_form(form)
    if errors:
        raise StudyFormError(errors)
    result = save_form(session, study, _heading_values(form), edit or PageEdit(),
                       read=_heading_texts, resolution=resolution, seen=seen)
    if result.outcome is SaveOutcome.DELETED:
        raise NotFoundError(f"Study {study_id} was deleted since.")
    if result.outcome is SaveOutcome.CHANGED_SINCE:
        session.rollback()
        raise ConflictError(result.conflicts)
    session.commit()
    session.refresh(study)
    return study


def _heading_texts(texts: Mapping[str, Any]) -> dict[str, Any]:
    """Sent heading text (the page's originals, the values a conflict showed), trimmed like
    the person's own."""
    return {name: str(texts[name]).strip() for name in HEADING_FIELDS if name in texts}


def _count_rows(session: Session, model: Any, study_id: int) -> int:
    """Rows of one table in a study (Any: any table model with a study_id column)."""
    statement = select(func.count()).select_from(model).where(model.study_id == study_id)
    return int(session.exec(statement).one())


def study_contents(*, session: Session, study_id: int) -> StudyContents:
    """Count what deleting the study would remove."""
    study = get_study(session, study_id)
    counts = [_count_rows(session, model, study_id) for model in
              (Node, Scenario, Step, SeverityCategory, Recommendation, Participant)]
    return StudyContents(study, *counts)


def delete_study(*, session: Session, study_id: int) -> StudyContents:
    """Delete a study and everything it holds (the one delete, `listing.delete_study`, which
    the command line uses too); returns what went, as the question named it."""
    contents = study_contents(session=session, study_id=study_id)
    listing.delete_study(session=session, study_id=study_id)
    return contents
