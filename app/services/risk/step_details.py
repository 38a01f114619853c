"""A step's details beyond its number: layer type, system, response time, SIL claim, typical
value and basis; used by the checks and by the proof-test calculator."""

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, fields
from typing import Any

from sqlmodel import Session, col, select
from sqlmodel.sql.expression import SelectOfScalar

from app.db.compare_and_set import SaveOutcome
from app.db.models import Deviation, Scenario, SeverityCategory, Step, Study, saved_id, text_limit
from app.db.queries import fetch_rows_of_study
from app.likelihood.check_base import CauseType
from app.likelihood.checks import CheckWarning
from app.likelihood.numbers import parse_frequency, parse_probability
from app.likelihood.types import (
    DemandMode,
    IplType,
    LikelihoodInputError,
    ModifierKind,
    Receptor,
    StepKind,
)
from app.likelihood.typical import TypicalValue, typical_by_key, typical_for_kind
from app.likelihood.uncertainty import read_typed_error_factor
from app.services.study.conflicts import FieldConflict, PageEdit, missing_row, save_form
from app.services.study.errors import length_problem
from app.services.study.results import compute_outcome, warnings_of
from app.services.study.spread import (
    error_factor_note,
    load_error_factor_inputs,
    step_error_factor,
)
from app.services.study.step_fields import receptors_text
from app.services.study.tree import NotFoundError, WorksheetSpot, get_study

# Any in this module: form readers take raw form values (the form boundary).

IPL_TYPE_LABELS: dict[IplType, str] = {
    IplType.BPCS: "BPCS loop (basic process control system)",
    IplType.SIF: "Safety instrumented function (SIF)",
    IplType.OPERATOR_RESPONSE: "Operator response to an alarm",
    IplType.RELIEF_DEVICE: "Relief device",
    IplType.PASSIVE: "Passive layer (dike, vent, wall, arrester)",
    IplType.OTHER: "Other layer",
}
SYSTEM_TAG_LIMIT, BASIS_LIMIT = text_limit(Step, "system_tag"), text_limit(Step, "basis")
TAG_LIMIT, CREW_LIMIT = text_limit(Step, "final_element_tag"), text_limit(Step, "crew")
MODIFIER_KIND_LABELS: dict[ModifierKind, str] = {
    ModifierKind.IGNITION: "Ignition (applies to every receptor)",
    ModifierKind.PRESENCE: "Presence or occupancy (people only)",
    ModifierKind.VULNERABILITY: "Probability of injury or fatality (people only)",
    ModifierKind.OTHER: "Other (every receptor unless said)",
}
CAUSE_TYPE_LABELS: dict[CauseType, str] = {
    CauseType.BPCS_FAILURE: "BPCS failure",
    CauseType.HUMAN_ERROR: "Human error",
    CauseType.EQUIPMENT_FAILURE: "Equipment failure",
    CauseType.EXTERNAL_EVENT: "External event",
    CauseType.OTHER: "Other",
}
# How a conflict (409) names each field and, for choices, each stored value.
FIELD_LABELS = {
    "ipl_type": "Layer type", "system_tag": "System or device", "sil_claimed": "SIL claimed",
    "time_available_minutes": "Time available (minutes)",
    "time_to_detect_and_act_minutes": "Time to detect and act (minutes)",
    "acts_after_sif": "Acts after an added SIF", "alarm_on_bpcs": "Alarm raised by the BPCS",
    "final_element_tag": "Final element", "crew": "Crew", "cause_type": "Cause type",
    "per_opportunity_probability": "Probability per opportunity",
    "opportunities_per_year": "Opportunities a year", "modifier_kind": "Modifier kind",
    "receptors": "Applies to", "typical_key": "Typical value", "basis": "Basis",
    "error_factor": "Error factor (EF)",
}
YES_NO = {"true": "yes", "false": "no"}


@dataclass(frozen=True)
class StepPlace:
    """A step with its scenario and where that scenario sits on the worksheet."""

    step: Step
    scenario: Scenario
    node_id: int
    spot: WorksheetSpot


def steps_of_scenario(scenario_id: int) -> SelectOfScalar[Step]:
    """Every step of one scenario in stored order."""
    return select(Step).where(Step.scenario_id == scenario_id).order_by(
        col(Step.position), col(Step.id))


def fetch_steps_of_scenario(session: Session, scenario_id: int) -> list[Step]:
    """Run steps_of_scenario."""
    return list(session.exec(steps_of_scenario(scenario_id)).all())


def locate_step(session: Session, study_id: int, step_id: int) -> StepPlace:
    """The step of this study with its scenario and node, or NotFoundError."""
    step = session.get(Step, step_id)
    if step is None:
        raise missing_row(session, study_id, Step, step_id,
                          f"There is no step {step_id} in study {study_id}.")
    if step.study_id != study_id:
        raise NotFoundError(f"There is no step {step_id} in study {study_id}.")
    scenario = session.get(Scenario, step.scenario_id)
    deviation = session.get(Deviation, scenario.deviation_id) if scenario else None
    if scenario is None or deviation is None:
        raise NotFoundError(f"Step {step_id} belongs to no scenario.")
    spot = WorksheetSpot(study_id, deviation.node_id, scenario.id or 0)
    return StepPlace(step, scenario, deviation.node_id, spot)


@dataclass(frozen=True)
class StepNeed:
    """What the scenario asks of this layer: the demand on it and the PFD that meets target."""

    demand_per_year: float
    required_pfd: float | None
    high_demand: bool


def step_need(session: Session, place: StepPlace) -> StepNeed | None:
    """The scenario computed without this layer: its demand and the PFD this layer needs."""
    others = [s for s in fetch_steps_of_scenario(session, place.scenario.id or 0)
              if s.id != place.step.id]
    categories = {saved_id(c.id): c for c in fetch_rows_of_study(session, SeverityCategory,
                                                                 place.step.study_id)}
    result = compute_outcome(place.scenario, others, categories).result
    if result is None:
        return None
    target = result.sil_target
    needed = 1 / result.ratio if result.ratio > 1 else None  # at most 1: met without the layer
    # The demand on this layer: what reaches it (initiating x enabling x layers before it).
    demand = result.demand.demand_rate_per_year if result.demand else result.mitigated_frequency
    return StepNeed(demand, needed, target.demand_mode is DemandMode.HIGH)


@dataclass(frozen=True)
class StepDetailsForm:
    """The details as typed."""

    ipl_type: str = ""
    system_tag: str = ""
    time_available_minutes: str = ""
    time_to_detect_and_act_minutes: str = ""
    sil_claimed: str = ""
    typical_key: str = ""
    basis: str = ""
    acts_after_sif: str = ""
    final_element_tag: str = ""
    alarm_on_bpcs: str = ""
    crew: str = ""
    modifier_kind: str = ""
    receptors: str = ""
    cause_type: str = ""
    per_opportunity_probability: str = ""
    opportunities_per_year: str = ""
    error_factor: str = ""

    @classmethod
    def from_step(cls, step: Step) -> "StepDetailsForm":
        """The step's stored details as form text (a time stored by the older single-time
        field shows as the time available)."""
        available = step.time_available_minutes
        if available is None:
            available = step.response_time_minutes
        return cls(
            ipl_type=step.ipl_type or "", system_tag=step.system_tag,
            time_available_minutes=_text(available),
            time_to_detect_and_act_minutes=_text(step.time_to_detect_and_act_minutes),
            sil_claimed="" if step.sil_claimed is None else str(step.sil_claimed),
            typical_key=step.typical_key or "", basis=step.basis,
            acts_after_sif="on" if step.acts_after_sif else "",
            final_element_tag=step.final_element_tag, crew=step.crew,
            alarm_on_bpcs={None: "", True: "yes", False: "no"}[step.alarm_on_bpcs],
            modifier_kind=step.modifier_kind or "", receptors=step.receptors or "",
            cause_type=step.cause_type or "",
            per_opportunity_probability=_text(step.per_opportunity_probability),
            opportunities_per_year=_text(step.opportunities_per_year),
            error_factor=_text(step.error_factor),
        )

    @classmethod
    def from_mapping(cls, data: Any) -> "StepDetailsForm":
        """Pick the fields out of submitted form data (receptor boxes joined with commas)."""
        values = {f.name: str(data.get(f.name, "")).strip() for f in fields(cls)}
        if hasattr(data, "getlist"):
            values["receptors"] = ",".join(str(v).strip() for v in data.getlist("receptors"))
        return cls(**values)


def _text(number: float | None) -> str:
    return "" if number is None else f"{number:g}"


@dataclass(frozen=True)
class StepDetailsPage:
    """Display-ready data for the step details page."""

    study: Study
    place: StepPlace
    kind_label: str
    is_ipl: bool
    form: StepDetailsForm
    errors: dict[str, str]
    typical_options: tuple[TypicalValue, ...]
    chosen_typical: TypicalValue | None
    ipl_types: dict[IplType, str]
    warnings: list[CheckWarning]
    saved: bool = False
    version: int | None = None  # the row's version this form was loaded with
    loaded: StepDetailsForm | None = None  # the details as loaded: the page's originals
    conflicts: tuple[FieldConflict, ...] = ()  # fields someone saved since (409)
    field_labels: dict[str, str] = field(default_factory=lambda: dict(FIELD_LABELS))
    modifier_kinds: dict[ModifierKind, str] = field(
        default_factory=lambda: dict(MODIFIER_KIND_LABELS))
    cause_types: dict[CauseType, str] = field(default_factory=lambda: dict(CAUSE_TYPE_LABELS))
    receptors: tuple[Receptor, ...] = tuple(Receptor)
    error_factor_note: str = ""
    """Which EF applies now and where it came from ("EF 3.2, from the typical-value range")."""

    def conflict_of(self, name: str) -> tuple[FieldConflict, ...]:
        """The conflict on one field, for the box at that field (empty when none)."""
        return tuple(c for c in self.conflicts if c.field == name)

    def original(self, name: str) -> str:
        """What the form sends as the field's original: as loaded, or after a conflict the
        page's own originals (the values it showed are sent apart, as seen_…)."""
        loaded = self.loaded or StepDetailsForm.from_step(self.place.step)
        return str(getattr(loaded, name))


def _details_page(session: Session, place: StepPlace, form: StepDetailsForm,
                  errors: dict[str, str], *, saved: bool = False,
                  conflict: "StepDetailsConflict | None" = None) -> StepDetailsPage:
    kind = place.step.kind
    steps = fetch_steps_of_scenario(session, place.scenario.id or 0)
    study = get_study(session, place.step.study_id)
    return StepDetailsPage(
        study=study, place=place, error_factor_note=_error_factor_note(session, study, place),
        kind_label=kind.label, is_ipl=kind is StepKind.IPL, form=form, errors=errors,
        typical_options=typical_for_kind(kind), chosen_typical=typical_by_key(form.typical_key),
        ipl_types=IPL_TYPE_LABELS, warnings=warnings_of(steps), saved=saved,
        version=conflict.page_version if conflict else place.step.version,
        loaded=conflict.loaded if conflict else StepDetailsForm.from_step(place.step),
        conflicts=conflict.fields if conflict else (),
    )


def _error_factor_note(session: Session, study: Study, place: StepPlace) -> str:
    inputs = load_error_factor_inputs(session, study)
    try:
        factor = step_error_factor(place.step, inputs)
    except LikelihoodInputError:
        return ""
    last = inputs.last_rounds.get(place.step.id or 0)
    return error_factor_note(factor, place.step.kind, last.number if last else None)


@dataclass(frozen=True)
class StepDetailsConflict:
    """A details save stopped because someone saved the same fields since the page loaded."""

    fields: tuple[FieldConflict, ...]
    page_version: int | None
    loaded: StepDetailsForm  # the page's originals, sent again with "keep mine"/"take theirs"


def build_step_details_page(*, session: Session, study_id: int, step_id: int) -> StepDetailsPage:
    """The step's details form filled from what is stored."""
    place = locate_step(session, study_id, step_id)
    return _details_page(session, place, StepDetailsForm.from_step(place.step), {})


def _minutes_of(label: str) -> Any:
    def read(text: str) -> float | None:
        if not text:
            return None
        try:
            minutes = float(text)
        except ValueError:
            raise ValueError(f"{label}: not a number of minutes (got '{text}').") from None
        if not (math.isfinite(minutes) and minutes >= 0):
            raise ValueError(f"{label}: minutes must be 0 or more (got {text}).")
        return minutes
    return read


def _number_of(label: str, parse: Any) -> Any:
    """A reader that takes a number as people say it, refusing with the parser's rule."""
    def read(text: str) -> float | None:
        if not text:
            return None
        try:
            return float(parse(text).value)
        except LikelihoodInputError as err:
            raise ValueError(f"{label}: {err.message}") from None
    return read


def _choice_of(label: str, known: tuple[str, ...]) -> Any:
    def read(text: str) -> str | None:
        if not text:
            return None
        if text not in known:
            raise ValueError(f"{label}: unknown choice '{text}' (known: {', '.join(known)}).")
        return text
    return read


def _receptors(text: str) -> str | None:
    names = [part.strip() for part in text.split(",") if part.strip()]
    unknown = [n for n in names if n not in tuple(Receptor)]
    if unknown:
        raise ValueError(f"Applies to: unknown receptor '{unknown[0]}' "
                         f"(known: {', '.join(Receptor)}).")
    return receptors_text(names)


def _yes_no(text: str) -> bool | None:
    if text not in ("", "yes", "no"):
        raise ValueError(f"Alarm on the BPCS: say yes, no or leave it blank (got '{text}').")
    return None if not text else text == "yes"


def _sil(text: str) -> int | None:
    if not text:
        return None
    if text not in {"1", "2", "3", "4"}:
        raise ValueError(f"SIL claimed: a SIL runs from 1 to 4 (got '{text}').")
    return int(text)


def _read_ipl_type(text: str) -> str | None:
    if not text:
        return None
    if text not in tuple(IplType):
        raise ValueError(f"Layer type: unknown type '{text}' (known: {', '.join(IplType)}).")
    return text


def _typical(text: str, kind: StepKind) -> str | None:
    if not text:
        return None
    row = typical_by_key(text)
    if row is None:
        raise ValueError(f"Typical value: no typical-value row '{text}'.")
    if row.kind != kind:
        raise ValueError(f"Typical value: '{row.label}' is a typical value for "
                         f"{row.kind.label.lower()}, not for this step.")
    return text


def _error_factor(text: str) -> float | None:
    try:
        return read_typed_error_factor(text)
    except LikelihoodInputError as err:
        raise ValueError(err.message) from None


def _form_text(text: str, limit: int, label: str) -> str:
    if problem := length_problem(text, limit):
        raise ValueError(f"{label}: {problem}")
    return text


def _readers(kind: StepKind) -> dict[str, Any]:
    """The fields a step of this kind keeps, each with its reader (raises with the rule)."""
    readers: dict[str, Any] = {
        "typical_key": lambda t: _typical(t, kind),
        "basis": lambda t: _form_text(t, BASIS_LIMIT, "Basis"),
        "error_factor": _error_factor,
    }
    if kind in (StepKind.IPL, StepKind.INITIATING_EVENT):
        readers |= {
            "system_tag": lambda t: _form_text(t, SYSTEM_TAG_LIMIT, "System or device"),
            "final_element_tag": lambda t: _form_text(t, TAG_LIMIT, "Final element"),
            "crew": lambda t: _form_text(t, CREW_LIMIT, "Crew"),
        }
    if kind is StepKind.IPL:
        readers |= {"ipl_type": _read_ipl_type, "sil_claimed": _sil,
                    "time_available_minutes": _minutes_of("Time available"),
                    "time_to_detect_and_act_minutes": _minutes_of("Time to detect and act"),
                    "acts_after_sif": lambda t: t == "on", "alarm_on_bpcs": _yes_no}
    if kind is StepKind.CONDITIONAL_MODIFIER:
        readers |= {"modifier_kind": _choice_of("Modifier kind", tuple(ModifierKind)),
                    "receptors": _receptors}
    if kind is StepKind.INITIATING_EVENT:
        readers |= {"cause_type": _choice_of("Cause type", tuple(CauseType)),
                    "per_opportunity_probability": _number_of(
                        "Probability per opportunity", parse_probability),
                    "opportunities_per_year": _number_of(
                        "Opportunities a year", parse_frequency)}
    return readers


def _read_fields(kind: StepKind, texts: Mapping[str, Any]) -> tuple[dict[str, Any], dict[str, str]]:
    """The sent fields a step of this kind keeps, read, and the error of each that does not."""
    values: dict[str, Any] = {}
    errors: dict[str, str] = {}
    for name, reader in _readers(kind).items():
        if name in texts:
            try:
                values[name] = reader(str(texts[name]).strip())
            except ValueError as err:
                errors[name] = str(err)
    return values, errors


def _choice_names(kind: StepKind, name: str) -> dict[str, str]:
    """How a conflict names a stored choice (a layer type's label for its key)."""
    choices: dict[str, Mapping[Any, str]] = {
        "ipl_type": IPL_TYPE_LABELS, "modifier_kind": MODIFIER_KIND_LABELS,
        "cause_type": CAUSE_TYPE_LABELS, "acts_after_sif": YES_NO, "alarm_on_bpcs": YES_NO,
        "typical_key": {row.key: row.label for row in typical_for_kind(kind)},
    }
    return {str(key): label for key, label in choices.get(name, {}).items()}


def save_step_details(*, session: Session, study_id: int, step_id: int, form: StepDetailsForm,
                      edit: PageEdit | None = None, resolution: str = "",
                      seen: Mapping[str, str] | None = None) -> StepDetailsPage:
    """Save the fields the person changed if every field is valid; otherwise save nothing,
    errors at the fields. A field someone else saved since the page loaded stops the save with
    both values at that field (409); `resolution` ("keep"/"take") answers it (logged)."""
    place = locate_step(session, study_id, step_id)
    kind = place.step.kind
    values, errors = _read_fields(kind, {f.name: getattr(form, f.name) for f in fields(form)})
    if errors:
        return _details_page(session, place, form, errors)
    edit = edit or PageEdit()
    result = save_form(session, place.step, values, edit,
                       read=lambda texts: _read_fields(kind, texts)[0],
                       resolution=resolution, seen=seen)
    if result.outcome is SaveOutcome.CHANGED_SINCE:
        session.rollback()
        shown = tuple(c.named(_choice_names(kind, c.field)) for c in result.conflicts)
        loaded = StepDetailsForm.from_mapping(edit.originals)
        return _details_page(session, place, form, {},
                             conflict=StepDetailsConflict(shown, edit.version, loaded))
    if result.outcome is SaveOutcome.DELETED:
        raise NotFoundError(f"Step {step_id} was deleted since.")
    session.commit()
    session.refresh(place.step)
    return _details_page(session, place, StepDetailsForm.from_step(place.step), {}, saved=True)
