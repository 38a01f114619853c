"""The versioned JSON file format of a whole study (export, import and the demo study).

Rows refer to each other by `ref` strings unique within one file, never by database ids,
so a file imports into any database.
"""

from datetime import date, datetime
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

from app.db.models import ActionStatus, Receptor, StepKindValue

FILE_FORMAT = "tallyroom-study"
SCHEMA_VERSION = 1


class FileRow(BaseModel):
    """Unknown keys are refused so a typo never passes silently."""

    model_config = ConfigDict(extra="forbid")


class StudyHeader(FileRow):
    title: str = Field(min_length=1, max_length=200)
    facility: str = ""
    scope: str = ""
    revision_label: str = "Draft"
    frequency_unit: Literal["per year"] = "per year"
    criteria_basis: str = ""


class CategoryRow(FileRow):
    ref: str
    name: str = Field(min_length=1, max_length=80)
    description: str = ""
    tolerable_frequency: float = Field(gt=0, allow_inf_nan=False)
    receptor: Receptor = Receptor.PEOPLE


class StepRow(FileRow):
    kind: StepKindValue
    description: str = ""
    value: float = Field(gt=0, allow_inf_nan=False)
    value_text: str = ""
    basis: str = ""
    credited: bool = True
    ipl_type: str | None = None
    system_tag: str = ""
    response_time_minutes: float | None = Field(default=None, ge=0)
    sil_claimed: int | None = Field(default=None, ge=1, le=4)
    typical_key: str | None = None
    proof_test: dict[str, Any] | None = None

    @model_validator(mode="after")
    def probability_at_most_one(self) -> "StepRow":
        """Probabilities and PFDs lie in (0, 1]; only the initiating event is a frequency."""
        if self.kind != StepKindValue.INITIATING_EVENT and self.value > 1:
            raise ValueError(f"a probability must be at most 1 (got {self.value})")
        return self


class SafeguardRow(FileRow):
    description: str = Field(min_length=1)
    note: str = ""


class ScenarioRow(FileRow):
    ref: str
    cause: str = ""
    consequence: str = ""
    notes: str = ""
    severity: str = Field(description="ref of a people/general severity category")
    environment_severity: str | None = None
    asset_severity: str | None = None
    steps: list[StepRow]
    safeguards: list[SafeguardRow] = []

    @model_validator(mode="after")
    def one_initiating_event(self) -> "ScenarioRow":
        """A scenario has exactly one initiating event."""
        count = sum(step.kind == StepKindValue.INITIATING_EVENT for step in self.steps)
        if count != 1:
            raise ValueError(f"a scenario needs exactly one initiating event (found {count})")
        return self


class DeviationRow(FileRow):
    guideword: str
    parameter: str
    description: str = ""
    scenarios: list[ScenarioRow] = []


class NodeRow(FileRow):
    number: str
    name: str = Field(min_length=1)
    design_intent: str = ""
    drawing_reference: str = ""
    deviations: list[DeviationRow] = []


class RecommendationRow(FileRow):
    text: str = Field(min_length=1)
    owner: str = ""
    due_date: date | None = None
    status: ActionStatus = ActionStatus.OPEN
    status_reason: str = ""
    expected_rrf: float | None = Field(default=None, gt=0, allow_inf_nan=False)
    scenarios: list[str] = Field(default=[], description="refs of the scenarios addressed")


class ParticipantRow(FileRow):
    ref: str
    name: str = Field(min_length=1)
    role: str = ""
    discipline: str = ""
    company: str = ""


class SessionDayRow(FileRow):
    day: date
    note: str = ""
    attendees: list[str] = Field(default=[], description="refs of participants present")


class ChangeLogRow(FileRow):
    at: datetime
    author: str = ""
    action: str
    entity: str
    field: str = ""
    old_value: str | None = None
    new_value: str | None = None
    summary: str = ""
    scenario: str | None = Field(default=None, description="ref of the scenario, if any")


class RevisionRow(FileRow):
    label: str
    note: str = ""
    frozen_at: datetime
    frozen_by: str = ""
    signed_off_by: str = ""
    signed_off_at: datetime | None = None
    snapshot: dict[str, Any]


class StudyFile(FileRow):
    """One whole study."""

    format: Literal["tallyroom-study"] = FILE_FORMAT
    schema_version: Literal[1] = SCHEMA_VERSION
    invented: bool = Field(default=False, description="true for made-up demo data")
    study: StudyHeader
    severity_categories: list[CategoryRow] = Field(min_length=1)
    nodes: list[NodeRow] = []
    recommendations: list[RecommendationRow] = []
    participants: list[ParticipantRow] = []
    session_days: list[SessionDayRow] = []
    change_log: list[ChangeLogRow] = []
    revisions: list[RevisionRow] = []

    @model_validator(mode="after")
    def references_resolve(self) -> "StudyFile":
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
        for entry in self.change_log:
            _must_exist("scenario", entry.scenario, scenarios, allow_missing=True)
        return self


def _unique_refs(what: str, refs: list[str]) -> set[str]:
    seen: set[str] = set()
    for ref in refs:
        if ref in seen:
            raise ValueError(f"{what} ref '{ref}' is used twice; refs must be unique")
        seen.add(ref)
    return seen


def _must_exist(what: str, ref: str | None, known: set[str], allow_missing: bool = False) -> None:
    # Change-log entries may name scenarios deleted since, so they are allowed to dangle.
    if ref is not None and ref not in known and not allow_missing:
        raise ValueError(f"{what} ref '{ref}' is not defined in this file")
