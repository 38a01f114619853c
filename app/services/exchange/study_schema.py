"""The versioned JSON file format of a whole study (export, import and the demo study).

Rows refer to each other by `ref` strings unique within one file, never by database ids,
so a file imports into any database.
"""

from collections import Counter
from datetime import date, datetime
from typing import Any, Final, Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator, model_validator

from app.db.models import ActionStatus, Receptor
from app.likelihood.check_base import CauseType
from app.likelihood.proof_test import Architecture
from app.likelihood.types import IplType, ModifierKind, StepKind
from app.likelihood.typical import typical_by_key
from app.likelihood.uncertainty import MAX_TYPED_ERROR_FACTOR
from app.services.exchange.study_schema_rounds import (
    EstimateRoundRow,
    ScaleWordRow,
    check_round_targets,
    check_word_scale,
)
from app.services.study.errors import nul_problem

# Any in this module: the proof-test inputs, the snapshot and the JSON Schema are JSON objects
# (the file boundary).

FILE_FORMAT: Final = "tallyroom-study"
SCHEMA_VERSION: Final = 2
SCHEMA_PATH = "/schema/study-v2.json"
READABLE_VERSIONS: Final = (1, 2)
"""Version 1 files are upgraded on reading (study_upgrade.upgrade_study_data)."""


class FileRow(BaseModel):
    """Unknown keys are refused so a typo never passes silently; no text may hold NUL.

    Files are validated strictly (`study_file.parse_study_file`): "1" is not a number, "yes" is
    not a boolean, an enumeration takes only its listed values.
    """

    model_config = ConfigDict(extra="forbid")

    @field_validator("*", mode="after")
    @classmethod
    def no_nul_in_text(cls, value: Any) -> Any:
        """PostgreSQL refuses NUL in text: the file is refused instead, saying where."""
        if isinstance(value, str) and (problem := nul_problem(value)):
            raise ValueError(problem)
        return value


_DEFAULT_EF: Any = Field(default=None, ge=1, le=MAX_TYPED_ERROR_FACTOR, allow_inf_nan=False)


class StudyHeader(FileRow):
    """The study itself: what was reviewed and against which criteria."""

    title: str = Field(min_length=1, max_length=200)
    facility: str = Field(default="", max_length=200)
    scope: str = Field(default="", max_length=5000)
    revision_label: str = Field(default="Draft", max_length=60)
    frequency_unit: Literal["per year"] = "per year"
    criteria_basis: str = Field(default="", max_length=500)
    # Optional (issue 13): the study's default EF per step kind; null: no default.
    error_factor_default_initiating_event: float | None = _DEFAULT_EF
    error_factor_default_enabling_condition: float | None = _DEFAULT_EF
    error_factor_default_conditional_modifier: float | None = _DEFAULT_EF
    error_factor_default_ipl: float | None = _DEFAULT_EF


class CategoryRow(FileRow):
    """A severity category and the tolerable frequency (per year) of its consequences."""

    ref: str = Field(min_length=1, max_length=40)
    name: str = Field(min_length=1, max_length=80)
    description: str = Field(default="", max_length=1000)
    tolerable_frequency: float = Field(gt=0, allow_inf_nan=False)
    receptor: Receptor = Receptor.PEOPLE


class ProofTestTyped(FileRow):
    """The proof-test calculator's inputs as the user typed them (re-shown in the calculator)."""

    architecture: str = Field(default="", max_length=60)
    lambda_du: str = Field(default="", max_length=60)
    lambda_dd: str = Field(default="", max_length=60)
    beta: str = Field(default="", max_length=60)
    beta_d: str = Field(default="", max_length=60)
    interval_value: str = Field(default="", max_length=60)
    interval_unit: str = Field(default="", max_length=60)
    mttr_hours: str = Field(default="", max_length=60)
    mrt_hours: str = Field(default="", max_length=60)
    target_pfd: str = Field(default="", max_length=60)


def _rate() -> Any:
    return Field(ge=0, allow_inf_nan=False)


class ProofTestRecord(FileRow):
    """How an IPL's PFD came from the proof-test calculator (IEC 61508-6 Annex B inputs)."""

    method: str = Field(max_length=200)
    architecture: Architecture
    lambda_du: float = _rate()
    lambda_dd: float = _rate()
    proof_test_interval_hours: float = Field(gt=0, allow_inf_nan=False)
    beta: float | None = Field(default=None, ge=0, le=1, allow_inf_nan=False)
    beta_d: float | None = Field(default=None, ge=0, le=1, allow_inf_nan=False)
    mttr_hours: float = _rate()
    mrt_hours: float | None = Field(default=None, ge=0, allow_inf_nan=False)
    pfd_avg: float = Field(gt=0, allow_inf_nan=False)
    typed: ProofTestTyped = ProofTestTyped()


class StepRow(FileRow):
    """One factor of a scenario: the initiating event (per year) or a probability / PFD."""

    kind: StepKind
    description: str = Field(default="", max_length=1000)
    value: float | None = Field(
        default=None, gt=0, allow_inf_nan=False,
        description="null only for an initiating event not given yet (incomplete scenario)")
    value_text: str = Field(default="", max_length=100)
    basis: str = Field(default="", max_length=2000)
    credited: bool = True
    ipl_type: IplType | None = None
    system_tag: str = Field(default="", max_length=80)
    response_time_minutes: float | None = Field(default=None, ge=0, allow_inf_nan=False)
    sil_claimed: int | None = Field(default=None, ge=1, le=4)
    typical_key: str | None = Field(default=None, max_length=60)
    proof_test: ProofTestRecord | None = None
    # Schema version 2 (issue 9): what the method and the IPL checks need per step.
    acts_after_sif: bool = False
    modifier_kind: ModifierKind | None = None
    receptors: list[Receptor] | None = Field(
        default=None, description="receptors a modifier applies to; null: its kind's default")
    cause_type: CauseType | None = None
    final_element_tag: str = Field(default="", max_length=80)
    alarm_on_bpcs: bool | None = None
    crew: str = Field(default="", max_length=80)
    per_opportunity_probability: float | None = Field(default=None, gt=0, le=1,
                                                      allow_inf_nan=False)
    opportunities_per_year: float | None = Field(default=None, gt=0, allow_inf_nan=False)
    time_available_minutes: float | None = Field(default=None, ge=0, allow_inf_nan=False)
    time_to_detect_and_act_minutes: float | None = Field(default=None, ge=0,
                                                         allow_inf_nan=False)
    # Optional (issue 13): the EF the team typed (95th over 50th percentile, the value being
    # the median); null: from the last estimate round, the typical range or the study default.
    error_factor: float | None = Field(default=None, ge=1, le=MAX_TYPED_ERROR_FACTOR,
                                       allow_inf_nan=False)

    @model_validator(mode="after")
    def probability_at_most_one(self) -> "StepRow":
        """Probabilities and PFDs lie in (0, 1]; only the initiating event is a frequency."""
        if self.value is None:
            if self.kind != StepKind.INITIATING_EVENT:
                raise ValueError("only an initiating event may be without a value (an "
                                 f"incomplete scenario); this {self.kind} step has none")
            return self
        if self.kind != StepKind.INITIATING_EVENT and self.value > 1:
            raise ValueError(f"a probability must be at most 1 (got {self.value})")
        return self

    @model_validator(mode="after")
    def typical_value_of_this_kind(self) -> "StepRow":
        """A typical-value key names a row of the published tables for this kind of step."""
        if self.typical_key is None:
            return self
        row = typical_by_key(self.typical_key)
        if row is None or str(row.kind) != str(self.kind):
            raise ValueError(f"typical_key '{self.typical_key}' is not a typical value for a "
                             f"step of kind {self.kind}")
        return self


class SafeguardRow(FileRow):
    """A safeguard noted for a scenario but not credited as an IPL."""

    description: str = Field(min_length=1, max_length=1000)
    note: str = Field(default="", max_length=1000)


class ScenarioRow(FileRow):
    """A cause-consequence pair with its steps, in worksheet order."""

    ref: str = Field(min_length=1, max_length=40)
    cause: str = Field(default="", max_length=2000)
    consequence: str = Field(default="", max_length=2000)
    notes: str = Field(default="", max_length=5000)
    severity: str | None = Field(
        default=None, description="ref of a people/general severity category; null while "
                                  "not given (an incomplete scenario)")
    environment_severity: str | None = None
    asset_severity: str | None = None
    people_not_rated: bool = False
    steps: list[StepRow]
    safeguards: list[SafeguardRow] = []

    @model_validator(mode="after")
    def one_initiating_event(self) -> "ScenarioRow":
        """A scenario has exactly one initiating event."""
        count = sum(step.kind == StepKind.INITIATING_EVENT for step in self.steps)
        if count != 1:
            raise ValueError(f"a scenario needs exactly one initiating event (found {count})")
        return self


class DeviationRow(FileRow):
    """A guideword applied to a parameter of the node."""

    guideword: str = Field(max_length=40)
    parameter: str = Field(max_length=60)
    description: str = Field(default="", max_length=2000)
    scenarios: list[ScenarioRow] = []


class NodeRow(FileRow):
    """A section of the process reviewed as one."""

    number: str = Field(max_length=20)
    name: str = Field(min_length=1, max_length=200)
    design_intent: str = Field(default="", max_length=2000)
    drawing_reference: str = Field(default="", max_length=200)
    deviations: list[DeviationRow] = []


class RecommendationRow(FileRow):
    """An action the team asked for, with the scenarios it addresses."""

    text: str = Field(min_length=1, max_length=2000)
    owner: str = Field(default="", max_length=120)
    due_date: date | None = None
    status: ActionStatus = ActionStatus.OPEN
    status_reason: str = Field(default="", max_length=1000)
    expected_rrf: float | None = Field(default=None, gt=0, allow_inf_nan=False)
    scenarios: list[str] = Field(default=[], description="refs of the scenarios addressed")

    @field_validator("scenarios")
    @classmethod
    def each_scenario_once(cls, refs: list[str]) -> list[str]:
        """An action links to a scenario at most once."""
        return _listed_once("scenario", refs)


class ParticipantRow(FileRow):
    """A member of the review team."""

    ref: str = Field(min_length=1, max_length=40)
    name: str = Field(min_length=1, max_length=120)
    role: str = Field(default="", max_length=80)
    discipline: str = Field(default="", max_length=80)
    company: str = Field(default="", max_length=120)


class SessionDayRow(FileRow):
    """A day the team met, with who was present."""

    day: date
    note: str = Field(default="", max_length=500)
    attendees: list[str] = Field(default=[], description="refs of participants present")

    @field_validator("attendees")
    @classmethod
    def each_attendee_once(cls, refs: list[str]) -> list[str]:
        """A participant is present on a day at most once."""
        return _listed_once("participant", refs)


class ChangeLogRow(FileRow):
    """One recorded create, edit or delete, oldest first."""

    at: datetime
    author: str = Field(default="", max_length=120)
    action: str = Field(max_length=10)
    entity: str = Field(max_length=40)
    field: str = Field(default="", max_length=60)
    old_value: str | None = None
    new_value: str | None = None
    summary: str = Field(default="", max_length=500)
    scenario: str | None = Field(default=None, description="ref of the scenario, if any")


class StudySnapshot(FileRow):
    """A study's content without history: a revision's frozen snapshot (and the file's core)."""

    format: Literal["tallyroom-study"] = FILE_FORMAT
    schema_version: Literal[2] = SCHEMA_VERSION
    invented: bool = Field(default=False, description="true for made-up demo data")
    cautions: str = Field(default="", description="the cautions every export carries; read "
                                                  "them before using the numbers")
    study: StudyHeader
    severity_categories: list[CategoryRow] = Field(min_length=1)
    nodes: list[NodeRow] = []
    recommendations: list[RecommendationRow] = []
    participants: list[ParticipantRow] = []
    session_days: list[SessionDayRow] = []
    # Optional in schema version 2 (issue 13): the estimate rounds and the team word scale.
    estimate_rounds: list[EstimateRoundRow] = []
    word_scale: list[ScaleWordRow] = []

    @model_validator(mode="after")
    def rounds_and_words_follow_their_rules(self) -> "StudySnapshot":
        """Each round names a step of this file in its unit; the word scale's words are valid."""
        step_kinds = {s.ref: [step.kind for step in s.steps]
                      for n in self.nodes for d in n.deviations for s in d.scenarios}
        check_round_targets(self.estimate_rounds, step_kinds)
        check_word_scale(self.word_scale)
        return self

    @model_validator(mode="after")
    def references_resolve(self) -> "StudySnapshot":
        """Every ref used points at a row defined in this file, and refs are unique."""
        categories = _unique_refs("severity category", [c.ref for c in self.severity_categories])
        scenarios = _unique_refs(
            "scenario",
            [s.ref for n in self.nodes for d in n.deviations for s in d.scenarios],
        )
        people = _unique_refs("participant", [p.ref for p in self.participants])
        for node in self.nodes:
            for deviation in node.deviations:
                for scenario in deviation.scenarios:
                    for ref in (scenario.severity, scenario.environment_severity,
                                scenario.asset_severity):
                        _must_exist("severity category", ref, categories)
        for action in self.recommendations:
            for ref in action.scenarios:
                _must_exist("scenario", ref, scenarios)
        for day in self.session_days:
            for ref in day.attendees:
                _must_exist("participant", ref, people)
        return self


class RevisionRow(FileRow):
    """A frozen revision with its snapshot (a study file without history), validated alike.

    The snapshot is embedded (`snapshot`) or named part by part (`snapshot_from_parts`, the
    parts in the file's `snapshot_parts`); reading puts it together before validating it.
    """

    label: str = Field(min_length=1, max_length=60)
    note: str = Field(default="", max_length=2000)
    frozen_at: datetime
    frozen_by: str = Field(default="", max_length=120)
    signed_off_by: str = Field(default="", max_length=120)
    signed_off_at: datetime | None = None
    snapshot: StudySnapshot | None = None
    # Optional in schema version 2 (issue 14): written instead of `snapshot`.
    snapshot_from_parts: dict[str, str | list[str]] | None = Field(
        default=None, description="the snapshot's keys in order, each naming the SHA-256 "
        "digest of its part in the file's snapshot_parts ('nodes': one digest per node); a "
        "scenario without a ref in a node part is S1, S2, ... in order across the snapshot")

    @model_validator(mode="after")
    def has_its_snapshot(self) -> "RevisionRow":
        """A revision carries its snapshot, embedded or named part by part (not both)."""
        if (self.snapshot is None) == (self.snapshot_from_parts is None):
            raise ValueError("a revision has either a snapshot or snapshot_from_parts (with "
                             "the parts in the file's snapshot_parts), exactly one of them")
        return self


class StudyFile(StudySnapshot):
    """One whole Tallyroom study: content, attendance, change log and revisions.

    Change-log entries may name scenarios deleted since, so their scenario refs may dangle.
    """

    model_config = ConfigDict(extra="forbid", title="Tallyroom study file, schema version 2")

    change_log: list[ChangeLogRow] = []
    revisions: list[RevisionRow] = []
    # Optional in schema version 2 (issue 14): the parts revisions name, each once.
    snapshot_parts: dict[str, Any] = Field(
        default={}, description="every snapshot part a revision names, keyed by the SHA-256 "
        "of the part's compact JSON text (no spaces, keys in the order written, UTF-8); a part "
        "whose content does not match its key refuses the file")
    computed_figures: list[dict[str, float | int | str | None]] = Field(
        default=[], description="each scenario's figures as Tallyroom computed them when the "
        "file was written: the CSV's columns with exact values, keyed by the CSV's headers, "
        "plus the scenario's file ref; for reading only, never imported (figures are "
        "always recomputed from the inputs above)")


def study_json_schema() -> dict[str, Any]:
    """The JSON Schema (draft 2020-12) document of the study file, as served and documented."""
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": SCHEMA_PATH,
        **StudyFile.model_json_schema(),
    }


def _listed_once(what: str, refs: list[str]) -> list[str]:
    # One count of the whole list: counting each ref's repeats in turn was quadratic.
    repeated = sorted(ref for ref, count in Counter(refs).items() if count > 1)
    if repeated:
        raise ValueError(f"{what} ref '{repeated[0]}' is listed twice; list each one once")
    return refs


def _unique_refs(what: str, refs: list[str]) -> set[str]:
    seen: set[str] = set()
    for ref in refs:
        if ref in seen:
            raise ValueError(f"{what} ref '{ref}' is used twice; refs must be unique")
        seen.add(ref)
    return seen


def _must_exist(what: str, ref: str | None, known: set[str]) -> None:
    if ref is not None and ref not in known:
        raise ValueError(f"{what} ref '{ref}' is not defined in this file")
