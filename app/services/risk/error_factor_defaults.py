"""The study's default error factor per step kind: the last source in the EF precedence.

A small form on its own page: one field per step kind (blank for no default), saved only when
every field is valid, through the version guard (a study changed since the page loaded gives
409 and saves nothing).
"""

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from sqlmodel import Session

from app.db.compare_and_set import SaveOutcome, save_if_version
from app.db.models import Study
from app.likelihood.types import LikelihoodInputError, StepKind
from app.likelihood.uncertainty import MAX_TYPED_ERROR_FACTOR, read_typed_error_factor
from app.services.study.spread import default_column
from app.services.study.tree import get_study

STALE = ("The study was changed since this page was loaded (by someone else or in another "
         "tab): nothing was saved. The defaults below are the saved ones; enter yours again.")


@dataclass(frozen=True)
class DefaultsPage:
    """The form: each kind's default as text, errors by kind, and the study's version."""

    study: Study
    texts: dict[StepKind, str]
    errors: dict[StepKind, str] = field(default_factory=dict)
    refusal: str = ""
    saved: bool = False
    kinds: tuple[StepKind, ...] = tuple(StepKind)
    largest: float = MAX_TYPED_ERROR_FACTOR


def _stored_texts(study: Study) -> dict[StepKind, str]:
    found = {kind: getattr(study, default_column(kind)) for kind in StepKind}
    return {kind: "" if value is None else f"{value:g}" for kind, value in found.items()}


def build_defaults_page(*, session: Session, study_id: int, saved: bool = False
                        ) -> DefaultsPage:
    """The study's defaults as stored."""
    study = get_study(session, study_id)
    return DefaultsPage(study, _stored_texts(study), saved=saved)


def _read(texts: Mapping[StepKind, str]) -> tuple[dict[str, float | None], dict[StepKind, str]]:
    values: dict[str, float | None] = {}
    errors: dict[StepKind, str] = {}
    for kind, text in texts.items():
        try:
            values[default_column(kind)] = read_typed_error_factor(
                text, f"Default EF for {kind.words}s")
        except LikelihoodInputError as err:
            errors[kind] = err.message
    return values, errors


def save_defaults(*, session: Session, study_id: int, form: Mapping[str, Any],
                  version: int | None) -> DefaultsPage:
    """Save every kind's default if all are valid; else errors at the fields, nothing saved."""
    study = get_study(session, study_id)
    texts = {kind: str(form.get(kind.value, "")).strip() for kind in StepKind}
    values, errors = _read(texts)
    if errors:
        return DefaultsPage(study, texts, errors)
    if version is None:  # a script or the CLI: unguarded, as other forms
        study.sqlmodel_update(values)
        session.add(study)
    elif save_if_version(session, Study, study_id, version, values) is not SaveOutcome.SAVED:
        session.rollback()
        fresh = get_study(session, study_id)
        session.refresh(fresh)
        return DefaultsPage(fresh, _stored_texts(fresh), refusal=STALE)
    session.commit()
    session.refresh(study)
    return DefaultsPage(study, _stored_texts(study), saved=True)
