"""A study's risk criteria: severity categories with tolerable frequencies, and their basis.

Changing a category re-evaluates every scenario rated with it at once (the study is computed
again from the stored rows), and the change reports how the scenarios' status moved.
"""

from collections.abc import Mapping
from dataclasses import dataclass, fields
from typing import Any

from sqlmodel import Session, col, func, or_, select
from sqlmodel.sql.expression import SelectOfScalar

from app.db.compare_and_set import SaveOutcome
from app.db.models import Receptor, Scenario, SeverityCategory, Study, text_limit
from app.likelihood.numbers import parse_frequency
from app.likelihood.types import LikelihoodInputError
from app.services.study.conflicts import FieldConflict, PageEdit, missing_row, save_form
from app.services.study.errors import length_problem
from app.services.study.results import governing_category
from app.services.study.tree import (
    NotFoundError,
    ScenarioBranch,
    StudyTree,
    get_study,
    load_study_tree,
)

# Any in this module: validated form values become model fields by name (the form boundary).

NAME_LIMIT = text_limit(SeverityCategory, "name")
DESCRIPTION_LIMIT = text_limit(SeverityCategory, "description")
BASIS_LIMIT = text_limit(Study, "criteria_basis")
RECEPTOR_LABELS = {Receptor.PEOPLE: "people", Receptor.ENVIRONMENT: "environment",
                   Receptor.ASSET: "asset"}


def shortest_text(value: float) -> str:
    """The shortest text that reads back as exactly this number: 3.33e-05 -> '3.33e-5'."""
    mantissa, _, exponent = repr(value).partition("e")
    return f"{mantissa}e{int(exponent)}" if exponent else mantissa


@dataclass(frozen=True)
class CategoryForm:
    """One category as typed."""

    name: str = ""
    description: str = ""
    tolerable_frequency: str = ""
    receptor: str = "people"

    @classmethod
    def from_mapping(cls, data: Any) -> "CategoryForm":
        """Pick the fields out of submitted form data."""
        return cls(**{f.name: str(data.get(f.name, "") or "").strip() for f in fields(cls)})

    @classmethod
    def from_row(cls, row: SeverityCategory) -> "CategoryForm":
        """A stored category as form text."""
        return cls(row.name, row.description, shortest_text(row.tolerable_frequency),
                   str(row.receptor))


@dataclass(frozen=True)
class CategoryUse:
    """A category with how the study uses it."""

    category: SeverityCategory
    form: CategoryForm
    plain: str
    rated_count: int
    governed_count: int
    short_count: int
    errors: dict[str, str]
    loaded: CategoryForm  # the stored row as text: what the page sends back as its originals


@dataclass(frozen=True)
class ReEvaluation:
    """What a change to a category did to the scenarios rated with it."""

    category_name: str
    scenario_count: int
    short_before: int
    short_after: int
    governed_before: int
    governed_after: int

    @property
    def sentence(self) -> str:
        """'14 scenarios re-evaluated: 5 short of target (was 3).'"""
        noun = "scenario" if self.scenario_count == 1 else "scenarios"
        return (f"'{self.category_name}' saved. {self.scenario_count} {noun} re-evaluated: "
                f"{self.short_after} short of target (was {self.short_before}); "
                f"{self.governed_after} governed by this category (was {self.governed_before}).")


@dataclass(frozen=True)
class CriteriaPage:
    """Display-ready data for the criteria page."""

    study: Study
    categories: tuple[CategoryUse, ...]
    new_form: CategoryForm
    new_errors: dict[str, str]
    basis_text: str
    basis_error: str
    message: str = ""
    refusal: str = ""
    conflict: "CategoryConflict | None" = None
    basis_conflict: "BasisConflict | None" = None

    @property
    def basis_version(self) -> int:
        """The study version the basis form sends: as loaded, or after a conflict the page's."""
        clash = self.basis_conflict
        return clash.page_version if clash and clash.page_version else self.study.version

    @property
    def basis_original(self) -> str:
        """The basis as the page loaded it (sent back as orig_criteria_basis)."""
        return self.basis_conflict.original if self.basis_conflict else self.study.criteria_basis


@dataclass(frozen=True)
class BasisConflict:
    """The basis save stopped because someone saved another basis since the page loaded."""

    fields: tuple[FieldConflict, ...]
    page_version: int | None
    original: str


@dataclass(frozen=True)
class CategoryConflict:
    """A category save stopped because someone changed the same fields since the page loaded."""

    category_id: int
    fields: tuple[FieldConflict, ...]
    page_version: int | None
    originals: Mapping[str, str]  # the page's loaded text, for the fields not in conflict

    def original_of(self, name: str) -> str:
        """What the "keep mine"/"take theirs" forms send as this field's original."""
        for clash in self.fields:
            if clash.field == name:
                return clash.theirs
        return self.originals.get(name, "")

    def clash(self, name: str) -> FieldConflict | None:
        """The conflict on this field, if any."""
        return next((c for c in self.fields if c.field == name), None)


def _rated_with(scenario: Scenario, category_id: int) -> bool:
    return category_id in (scenario.severity_category_id, scenario.environment_category_id,
                           scenario.asset_category_id)


def _governed_by(item: ScenarioBranch, categories: Mapping[int, SeverityCategory]) -> int | None:
    """The category of the scenario's governing line (the receptor needing the largest risk
    reduction, with its own modifiers); a scenario that cannot be computed falls back to its
    strictest rating, the only reading without arithmetic."""
    category = item.outcome.governing_category or governing_category(item.scenario, categories)
    return category.id if category is not None else None


def _use(tree: StudyTree, row: SeverityCategory, form: CategoryForm | None = None,
         errors: dict[str, str] | None = None) -> CategoryUse:
    items = tree.scenario_branches()
    by_id = {c.id: c for c in tree.categories if c.id is not None}
    governed = [s for s in items if _governed_by(s, by_id) == row.id]
    short = [s for s in governed if s.outcome.result and not s.outcome.result.meets_target]
    return CategoryUse(
        category=row, form=form or CategoryForm.from_row(row),
        plain=parse_frequency(repr(row.tolerable_frequency)).plain,
        rated_count=sum(_rated_with(s.scenario, row.id or 0) for s in items),
        governed_count=len(governed), short_count=len(short), errors=errors or {},
        loaded=CategoryForm.from_row(row),
    )


Edited = dict[int, tuple[CategoryForm, dict[str, str]]]


def _criteria_page(session: Session, study_id: int, *, edited: Edited | None = None,
                   new_form: CategoryForm | None = None, new_errors: dict[str, str] | None = None,
                   basis_text: str | None = None, basis_error: str = "", message: str = "",
                   refusal: str = "", tree: StudyTree | None = None,
                   conflict: CategoryConflict | None = None,
                   basis_conflict: BasisConflict | None = None) -> CriteriaPage:
    tree = tree or load_study_tree(session, study_id)
    edited = edited or {}
    uses = tuple(_use(tree, row, *edited.get(row.id or 0, (None, None)))
                 for row in tree.categories)
    return CriteriaPage(
        study=tree.study, categories=uses, new_form=new_form or CategoryForm(),
        new_errors=new_errors or {},
        basis_text=tree.study.criteria_basis if basis_text is None else basis_text,
        basis_error=basis_error, message=message, refusal=refusal, conflict=conflict,
        basis_conflict=basis_conflict,
    )


def build_criteria_page(*, session: Session, study_id: int,
                        added_id: int | None = None) -> CriteriaPage:
    """The study's categories with how many scenarios each governs (and, after an add, which
    one was added: the create form redirects here so a reload cannot add it twice)."""
    added = session.get(SeverityCategory, added_id) if added_id is not None else None
    if added is None or added.study_id != study_id:
        return _criteria_page(session, study_id)
    return _criteria_page(session, study_id,
                          message=f"'{added.name}' added. No scenario is rated with it yet.")


def name_taken(session: Session, study_id: int, name: str, except_id: int | None = None) -> str:
    """The rule's message when another category of the study has this name (case and outer
    spaces ignored), else ""."""
    wanted = name.strip().casefold()
    for row in session.exec(select(SeverityCategory).where(
            SeverityCategory.study_id == study_id)).all():
        if row.id != except_id and row.name.strip().casefold() == wanted:
            return f"Name: the study already has a category called '{row.name}'; names must differ."
    return ""


def validate_category(form: CategoryForm) -> tuple[dict[str, Any], dict[str, str]]:
    """The category's values, or the error of each field naming its rule."""
    values: dict[str, object] = {}
    errors: dict[str, str] = {}
    if not form.name:
        errors["name"] = "Name: a category needs a name."
    elif problem := length_problem(form.name, NAME_LIMIT):
        errors["name"] = f"Name: {problem}"
    if problem := length_problem(form.description, DESCRIPTION_LIMIT):
        errors["description"] = f"Description: {problem}"
    try:
        values["tolerable_frequency"] = parse_frequency(
            form.tolerable_frequency, "Tolerable frequency").value
    except LikelihoodInputError as err:
        errors["tolerable_frequency"] = err.message
    if form.receptor not in tuple(Receptor):
        errors["receptor"] = (f"Receptor: '{form.receptor}' is not one of "
                              f"{', '.join(Receptor)}.")
    values |= {"name": form.name, "description": form.description, "receptor": form.receptor}
    return values, errors


def _get_category(session: Session, study_id: int, category_id: int) -> SeverityCategory:
    row = session.get(SeverityCategory, category_id)
    message = f"There is no severity category {category_id} in study {study_id}."
    if row is None:
        raise missing_row(session, study_id, SeverityCategory, category_id, message)
    if row.study_id != study_id:
        raise NotFoundError(message)
    return row


def _short_and_governed(tree: StudyTree, category_id: int) -> tuple[list[bool], int]:
    by_id = {c.id: c for c in tree.categories if c.id is not None}
    rated = [s for s in tree.scenario_branches() if _rated_with(s.scenario, category_id)]
    short = [bool(s.outcome.result and not s.outcome.result.meets_target) for s in rated]
    governed = len([s for s in rated if _governed_by(s, by_id) == category_id])
    return short, governed


def save_category(*, session: Session, study_id: int, category_id: int, form: CategoryForm,
                  edit: PageEdit | None = None, resolution: str = "",
                  seen: Mapping[str, str] | None = None) -> CriteriaPage:
    """Save the fields the person changed and re-evaluate the scenarios rated with the category.

    Errors save nothing; a field someone else changed since the page loaded stops the save with
    both values (409). `resolution` ("keep"/"take") answers such a conflict: the other
    person's values the conflict showed (`seen`) become the originals, and "take" also the
    values; the choice is logged.
    """
    row = _get_category(session, study_id, category_id)
    values, errors = validate_category(form)
    if "name" not in errors and (taken := name_taken(session, study_id, form.name, category_id)):
        errors["name"] = taken
    if errors:
        return _criteria_page(session, study_id, edited={category_id: (form, errors)})
    short_before, governed_before = _short_and_governed(load_study_tree(session, study_id),
                                                        category_id)
    edit = edit or PageEdit()
    result = save_form(session, row, values, edit, read=_original_values,
                       resolution=resolution, seen=seen)
    if result.outcome is SaveOutcome.CHANGED_SINCE:
        session.rollback()
        conflict = CategoryConflict(category_id, result.conflicts, edit.version,
                                    {k: str(v) for k, v in edit.originals.items()})
        return _criteria_page(session, study_id, edited={category_id: (form, {})},
                              conflict=conflict)
    if result.outcome is SaveOutcome.DELETED:
        raise NotFoundError(f"Severity category {category_id} was deleted since.")
    session.commit()
    after = load_study_tree(session, study_id)
    short_after, governed_after = _short_and_governed(after, category_id)
    change = ReEvaluation(row.name, len(short_after), sum(short_before), sum(short_after),
                          governed_before, governed_after)
    return _criteria_page(session, study_id, message=change.sentence, tree=after)


def _original_values(originals: Mapping[str, Any]) -> dict[str, Any]:
    """The page's loaded text read like the person's own (a field that does not read: unknown)."""
    form = CategoryForm.from_mapping(originals)
    values, errors = validate_category(form)
    return {name: value for name, value in values.items()
            if name in originals and name not in errors}


def _next_category_position(session: Session, study_id: int) -> int:
    statement = select(func.max(SeverityCategory.position)).where(
        SeverityCategory.study_id == study_id)
    return (session.exec(statement).one() or 0) + 1


def add_category(*, session: Session, study_id: int,
                 form: CategoryForm) -> CriteriaPage | SeverityCategory:
    """Add a category at the end and return it; errors save nothing and answer the page with
    the typed text kept."""
    get_study(session, study_id)
    values, errors = validate_category(form)
    if "name" not in errors and (taken := name_taken(session, study_id, form.name)):
        errors["name"] = taken
    if errors:
        return _criteria_page(session, study_id, new_form=form, new_errors=errors)
    position = _next_category_position(session, study_id)
    row = SeverityCategory(study_id=study_id, position=position, **values)
    session.add(row)
    session.commit()
    return row


def scenarios_rated_with(category_id: int) -> SelectOfScalar[int]:
    """How many scenarios carry this category in any of their three ratings."""
    return select(func.count()).select_from(Scenario).where(or_(
        col(Scenario.severity_category_id) == category_id,
        col(Scenario.environment_category_id) == category_id,
        col(Scenario.asset_category_id) == category_id,
    ))


def remove_category(*, session: Session, study_id: int, category_id: int) -> CriteriaPage:
    """Delete a category no scenario uses; otherwise refuse and say why."""
    row = _get_category(session, study_id, category_id)
    used = session.exec(scenarios_rated_with(category_id)).one()
    if used:
        noun = "scenario is" if used == 1 else "scenarios are"
        return _criteria_page(session, study_id, refusal=(
            f"'{row.name}' was not deleted: {used} {noun} rated with it. Rate them with "
            f"another category first."))
    name = row.name
    session.delete(row)
    session.commit()
    return _criteria_page(session, study_id, message=f"'{name}' deleted.")


def save_criteria_basis(*, session: Session, study_id: int, text: str,
                        edit: PageEdit | None = None, resolution: str = "",
                        seen: Mapping[str, str] | None = None) -> CriteriaPage:
    """Say where the criteria come from; errors save nothing and keep the typed text, and a
    basis someone else saved since the page loaded stops the save with both texts (409)."""
    study = get_study(session, study_id)
    typed = text.strip()
    if not typed:
        error = "Criteria basis: say where these criteria come from (e.g. your company standard)."
    elif problem := length_problem(typed, BASIS_LIMIT):
        error = f"Criteria basis: {problem}"
    else:
        return _save_basis(session, study, typed, edit or PageEdit(), resolution, seen)
    return _criteria_page(session, study_id, basis_text=text, basis_error=error)


def _basis_text(texts: Mapping[str, Any]) -> dict[str, Any]:
    """The sent basis text, trimmed like the person's own."""
    return {name: str(text).strip() for name, text in texts.items() if name == "criteria_basis"}


def _save_basis(session: Session, study: Study, typed: str, edit: PageEdit, resolution: str,
                seen: Mapping[str, str] | None) -> CriteriaPage:
    study_id = int(study.id or 0)
    result = save_form(session, study, {"criteria_basis": typed}, edit, read=_basis_text,
                       resolution=resolution, seen=seen)
    if result.outcome is SaveOutcome.CHANGED_SINCE:
        session.rollback()
        clash = BasisConflict(result.conflicts, edit.version,
                              str(edit.originals.get("criteria_basis", "")))
        return _criteria_page(session, study_id, basis_text=typed, basis_conflict=clash)
    if result.outcome is SaveOutcome.DELETED:
        raise NotFoundError(f"Study {study_id} was deleted since.")
    session.commit()
    return _criteria_page(session, study_id, message="Criteria basis saved.")
