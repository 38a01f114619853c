"""All table models: one family per table, every editable row versioned and timestamped."""

from datetime import UTC, date, datetime
from enum import StrEnum
from typing import Any

from sqlalchemy import Column, Dialect, Index, MetaData, Text, false, select, text
from sqlalchemy.orm import column_property
from sqlalchemy.types import TypeDecorator
from sqlmodel import AutoString, Field, SQLModel

from app.likelihood.types import StepKind

# Constraint names are fixed so Alembic migrations are stable on SQLite and PostgreSQL alike.
SQLModel.metadata = MetaData(
    naming_convention={
        "ix": "ix_%(column_0_label)s",
        "uq": "uq_%(table_name)s_%(column_0_name)s",
        "ck": "ck_%(table_name)s_%(constraint_name)s",
        "fk": "fk_%(table_name)s_%(column_0_name)s_%(referred_table_name)s",
        "pk": "pk_%(table_name)s",
    }
)


def saved_id(row_id: int | None) -> int:
    """The id of a row that has been flushed (only a row never flushed has none)."""
    if row_id is None:
        raise ValueError("the row has no id until it is flushed")
    return row_id


def utc_now() -> datetime:
    """Timezone-aware UTC timestamp (the type SQLModel stores on every database)."""
    return datetime.now(UTC)


def text_limit(model: type[SQLModel], field: str) -> int:
    """The longest text a column holds: the one limit every form and file check uses."""
    length = model.__table__.columns[field].type.length  # type: ignore[attr-defined]
    if length is None:
        raise ValueError(f"{model.__name__}.{field} has no length limit")
    return int(length)


class StepKindText(TypeDecorator[StepKind]):
    """A step kind stored as plain text (not a database enum, so a new kind needs no migration
    on PostgreSQL) and read back as app.likelihood's StepKind, the one vocabulary of kinds."""

    impl = AutoString(length=30)
    cache_ok = True

    def process_bind_param(self, value: str | None, dialect: Dialect) -> str | None:
        return None if value is None else StepKind(value).value

    def process_result_value(self, value: str | None, dialect: Dialect) -> StepKind | None:
        # A dict look-up: StepKind(value) was a tenth of a 10,000-scenario export's time.
        return None if value is None else STEP_KINDS.get(value) or StepKind(value)


STEP_KINDS = {kind.value: kind for kind in StepKind}


class Receptor(StrEnum):
    """Who or what a severity category is about."""

    PEOPLE = "people"
    ENVIRONMENT = "environment"
    ASSET = "asset"


class ActionStatus(StrEnum):
    """Where a recommendation stands."""

    OPEN = "open"
    IN_PROGRESS = "in_progress"
    DONE = "done"
    REJECTED = "rejected"


class TrackedRow(SQLModel):
    """Columns every editable row carries: a version for conflict detection and timestamps."""

    version: int = Field(default=1, nullable=False)
    created_at: datetime = Field(default_factory=utc_now, nullable=False)
    updated_at: datetime = Field(default_factory=utc_now, nullable=False)


def _study_fk() -> Any:  # Any: SQLModel's Field() is typed to fit any annotation
    return Field(foreign_key="study.id", ondelete="CASCADE", index=True)


class StudyBase(SQLModel):
    title: str = Field(min_length=1, max_length=200)
    facility: str = Field(default="", max_length=200)
    scope: str = Field(default="", sa_column_kwargs={"default": ""}, max_length=5000)
    revision_label: str = Field(default="Draft", max_length=60)
    frequency_unit: str = Field(default="per year", max_length=20)
    criteria_basis: str = Field(
        default="Example criteria, invented: replace with your company's own risk criteria.",
        max_length=500,
    )
    # Made-up demonstration data: shown as such on every page and carried through exports.
    invented: bool = Field(default=False, sa_column_kwargs={"server_default": false()})


class Study(StudyBase, TrackedRow, table=True):
    id: int | None = Field(default=None, primary_key=True)
    # Which scenario the scribe is on; shown by the room view. Not part of the record.
    focus_scenario_id: int | None = Field(default=None)
    focus_changed_at: datetime | None = Field(default=None)
    # Raised by one in the transaction of every content change (app/db/tracking.py), so the
    # room view's poll asks one row whether anything changed. Not part of the record.
    content_version: int = Field(default=0, sa_column_kwargs={"server_default": "0"})
    # The study's default error factor per step kind (issue 13), used when a step has no typed
    # EF, no estimate round with a spread and no typical-value range; None: no default.
    error_factor_default_initiating_event: float | None = Field(default=None, ge=1)
    error_factor_default_enabling_condition: float | None = Field(default=None, ge=1)
    error_factor_default_conditional_modifier: float | None = Field(default=None, ge=1)
    error_factor_default_ipl: float | None = Field(default=None, ge=1)


class SeverityCategoryBase(SQLModel):
    name: str = Field(min_length=1, max_length=80)
    description: str = Field(default="", max_length=1000)
    tolerable_frequency: float = Field(gt=0)
    receptor: Receptor = Field(default=Receptor.PEOPLE, sa_type=AutoString(length=20))
    position: int = 0


class SeverityCategory(SeverityCategoryBase, TrackedRow, table=True):
    __tablename__ = "severity_category"
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()


class NodeBase(SQLModel):
    number: str = Field(max_length=20)
    name: str = Field(min_length=1, max_length=200)
    design_intent: str = Field(default="", max_length=2000)
    drawing_reference: str = Field(default="", max_length=200)
    position: int = 0


class Node(NodeBase, TrackedRow, table=True):
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()


class DeviationBase(SQLModel):
    guideword: str = Field(max_length=40)
    parameter: str = Field(max_length=60)
    description: str = Field(default="", max_length=2000)
    position: int = 0


class Deviation(DeviationBase, TrackedRow, table=True):
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()
    node_id: int = Field(foreign_key="node.id", ondelete="CASCADE", index=True)


class ScenarioBase(SQLModel):
    cause: str = Field(default="", max_length=2000)
    consequence: str = Field(default="", max_length=2000)
    notes: str = Field(default="", max_length=5000)
    # True for a scenario with no potential to harm people: only environment and asset are rated.
    people_not_rated: bool = Field(default=False, sa_column_kwargs={"server_default": false()})
    position: int = 0


class Scenario(ScenarioBase, TrackedRow, table=True):
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()
    deviation_id: int = Field(foreign_key="deviation.id", ondelete="CASCADE", index=True)
    # None until the team gives the severity: the scenario is incomplete (no target, no SIL).
    severity_category_id: int | None = Field(
        default=None, foreign_key="severity_category.id", ondelete="RESTRICT"
    )
    environment_category_id: int | None = Field(
        default=None, foreign_key="severity_category.id", ondelete="SET NULL"
    )
    asset_category_id: int | None = Field(
        default=None, foreign_key="severity_category.id", ondelete="SET NULL"
    )


class StepBase(SQLModel):
    kind: StepKind = Field(sa_type=StepKindText)
    description: str = Field(default="", max_length=1000)
    # None only for an initiating event whose frequency the team has not given yet (the
    # scenario is incomplete); every other step starts at 1 (no credit).
    value: float | None = Field(default=None, gt=0)
    # The scribe's own words for the last valid value, e.g. "1 in 100" or "3 in 30 years".
    value_text: str = Field(default="", max_length=100)
    basis: str = Field(default="", max_length=2000)
    credited: bool = True
    ipl_type: str | None = Field(default=None, max_length=30)
    # The device or system this step is about: the cause's system for an initiating event,
    # the layer's system for an IPL. Used by the independence checks.
    system_tag: str = Field(default="", max_length=80)
    response_time_minutes: float | None = Field(default=None, ge=0)
    sil_claimed: int | None = Field(default=None, ge=1, le=4)
    typical_key: str | None = Field(default=None, max_length=60)
    # Proof-test calculator inputs (JSON) when the PFD was taken from the calculator.
    proof_test: str | None = Field(default=None, sa_column=Column(Text, nullable=True))
    # What the method needs per step (issue 9); each is read by app.likelihood.check_base.
    # An IPL that acts after an added SIF (bund, blast wall) does not reduce the SIF's demand.
    acts_after_sif: bool = Field(default=False, sa_column_kwargs={"server_default": false()})
    # A conditional modifier's kind (types.ModifierKind) and its receptors, comma-separated
    # ("people,environment"); None means the default of its kind.
    modifier_kind: str | None = Field(default=None, max_length=30)
    receptors: str | None = Field(default=None, max_length=60)
    # An initiating event's kind of failure (check_base.CauseType).
    cause_type: str | None = Field(default=None, max_length=30)
    final_element_tag: str = Field(default="", max_length=80,
                                   sa_column_kwargs={"server_default": ""})
    alarm_on_bpcs: bool | None = Field(default=None)
    crew: str = Field(default="", max_length=80, sa_column_kwargs={"server_default": ""})
    # A per-task value (operator error per opportunity) and how many tasks a year.
    per_opportunity_probability: float | None = Field(default=None, gt=0, le=1)
    opportunities_per_year: float | None = Field(default=None, gt=0)
    time_available_minutes: float | None = Field(default=None, ge=0)
    time_to_detect_and_act_minutes: float | None = Field(default=None, ge=0)
    # The team's error factor (95th over 50th percentile) for this value, read as a median;
    # None: taken from the last estimate round, the typical-value range or the study default.
    error_factor: float | None = Field(default=None, ge=1)
    position: int = 0


class Step(StepBase, TrackedRow, table=True):
    __table_args__ = (
        Index(
            "uq_step_one_initiating_event",
            "scenario_id",
            unique=True,
            sqlite_where=text("kind = 'initiating_event'"),
            postgresql_where=text("kind = 'initiating_event'"),
        ),
    )
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()
    scenario_id: int = Field(foreign_key="scenario.id", ondelete="CASCADE", index=True)


class SafeguardBase(SQLModel):
    description: str = Field(min_length=1, max_length=1000)
    note: str = Field(default="", max_length=1000)
    position: int = 0


class Safeguard(SafeguardBase, TrackedRow, table=True):
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()
    scenario_id: int = Field(foreign_key="scenario.id", ondelete="CASCADE", index=True)


class RecommendationBase(SQLModel):
    text: str = Field(min_length=1, max_length=2000)
    owner: str = Field(default="", max_length=120)
    due_date: date | None = None
    status: ActionStatus = Field(default=ActionStatus.OPEN, sa_type=AutoString(length=20))
    status_reason: str = Field(default="", max_length=1000)
    expected_rrf: float | None = Field(default=None, gt=0)
    position: int = 0


class Recommendation(RecommendationBase, TrackedRow, table=True):
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()


class RecommendationScenario(SQLModel, table=True):
    __tablename__ = "recommendation_scenario"
    recommendation_id: int = Field(
        foreign_key="recommendation.id", ondelete="CASCADE", primary_key=True
    )
    # Indexed: the worksheet and the room view look up one scenario's actions.
    scenario_id: int = Field(foreign_key="scenario.id", ondelete="CASCADE", primary_key=True,
                             index=True)


class ParticipantBase(SQLModel):
    name: str = Field(min_length=1, max_length=120)
    role: str = Field(default="", max_length=80)
    discipline: str = Field(default="", max_length=80)
    company: str = Field(default="", max_length=120)


class Participant(ParticipantBase, TrackedRow, table=True):
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()


class SessionDayBase(SQLModel):
    day: date
    note: str = Field(default="", max_length=500)


class SessionDay(SessionDayBase, TrackedRow, table=True):
    __tablename__ = "session_day"
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()


class Attendance(SQLModel, table=True):
    session_day_id: int = Field(foreign_key="session_day.id", ondelete="CASCADE", primary_key=True)
    participant_id: int = Field(foreign_key="participant.id", ondelete="CASCADE", primary_key=True)


class ChangeLogEntry(SQLModel, table=True):
    """One recorded create, edit or delete of study content."""

    __tablename__ = "change_log_entry"
    # Every keystroke looks for the same person's last edit of the same field to fold into;
    # without this index that search walks the whole log when there is none.
    __table_args__ = (Index("ix_change_log_entry_target", "entity", "entity_id", "field", "at"),)
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()
    at: datetime = Field(default_factory=utc_now, index=True)
    author: str = Field(default="", max_length=120)
    action: str = Field(max_length=10)
    entity: str = Field(max_length=40)
    entity_id: int | None = None
    # No foreign key: the entry outlives a deleted scenario.
    scenario_id: int | None = Field(default=None, index=True)
    field: str = Field(default="", max_length=60)
    old_value: str | None = Field(default=None, sa_column=Column(Text, nullable=True))
    new_value: str | None = Field(default=None, sa_column=Column(Text, nullable=True))
    summary: str = Field(default="", max_length=500)


class Revision(SQLModel, table=True):
    """A frozen, read-only snapshot of a study, stored as shared parts (SnapshotPart)."""

    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()
    label: str = Field(min_length=1, max_length=60)
    note: str = Field(default="", max_length=2000)
    frozen_at: datetime = Field(default_factory=utc_now)
    frozen_by: str = Field(default="", max_length=120)
    signed_off_by: str = Field(default="", max_length=120)
    signed_off_at: datetime | None = None
    # The snapshot's manifest (JSON): its keys in order, each naming a part's digest, "nodes" a
    # list of them (app/db/snapshot_parts.py). app/db/snapshot_store.py writes and reads it.
    snapshot_parts: str = Field(sa_column=Column(Text, nullable=False))

    @property
    def snapshot(self) -> str:
        """The whole snapshot as a study file's JSON text, put together from its parts through
        the session the revision was read in (like a lazily loaded relationship)."""
        from app.db.snapshot_store import snapshot_text  # it reads this module's tables

        return snapshot_text(self)


class SnapshotPart(SQLModel, table=True):
    """One part of revision snapshots (a node, the criteria, ...), stored once per study and
    keyed by the SHA-256 of its compact JSON text; revisions share parts that did not change."""

    __tablename__ = "snapshot_part"
    study_id: int = Field(foreign_key="study.id", ondelete="CASCADE", primary_key=True)
    digest: str = Field(max_length=64, primary_key=True)
    content: str = Field(sa_column=Column(Text, nullable=False))


# The newest frozen revision's label, read with the study in one correlated subquery, so every
# study page can say "working copy since Rev A" (the study's revision label and its frozen
# revisions are one concept) without a query of its own. Not a column: nothing to migrate.
Study.latest_revision_label = column_property(
    select(Revision.label)  # type: ignore[call-overload]
    .where(Revision.study_id == Study.id)
    .order_by(Revision.id.desc())  # type: ignore[union-attr]
    .limit(1).correlate_except(Revision).scalar_subquery()
)


def latest_revision_label(study: Study) -> str | None:
    """The label of the study's newest frozen revision, or None while none is frozen."""
    label: str | None = getattr(study, "latest_revision_label", None)
    return label


class DeletedItem(SQLModel, table=True):
    """What a delete removed, kept so its author can undo it (newest first, per person)."""

    __tablename__ = "deleted_item"
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()
    deleted_at: datetime = Field(default_factory=utc_now)
    author: str = Field(default="", max_length=120)
    entity: str = Field(max_length=40)
    label: str = Field(default="", max_length=300)
    payload: str = Field(sa_column=Column(Text, nullable=False))
    # Why an undo could not bring it back (empty: it can be tried); such an item no longer
    # stands in the way of its author's older deletes.
    blocked_reason: str = Field(default="", max_length=500,
                                sa_column_kwargs={"server_default": ""})


class FieldEdit(SQLModel, table=True):
    """The newest keystroke sequence number one page has sent for one field, and its text.

    Compared and set in the same transaction as the value (`services/study/conflicts.py`), so
    an older keystroke never overwrites a newer one, whichever worker or thread serves it.
    `written` is the text this page last saved in the field: a save that finds the field
    holding it is building on its own edit, not on someone else's.
    """

    __tablename__ = "field_edit"
    study_id: int = _study_fk()
    entity: str = Field(max_length=40, primary_key=True)
    row_id: int = Field(primary_key=True)
    field: str = Field(max_length=60, primary_key=True)
    client: str = Field(max_length=64, primary_key=True)
    seq: int = 0
    written: str | None = Field(default=None, sa_column=Column(Text, nullable=True))


class RoundState(StrEnum):
    """Where an estimate round stands: answers hidden, shown to the room, or agreed."""

    OPEN = "open"
    REVEALED = "revealed"
    AGREED = "agreed"


class EstimateRound(SQLModel, table=True):
    """One private round of estimates on a step's value or a word, and its outcome.

    Not a TrackedRow: rounds and estimates stay out of the change log, which editors read
    while a round is open; agreeing writes the step, and that edit is logged.
    """

    __tablename__ = "estimate_round"
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()
    # A round is on a step's value, or (step None) on a word of the team's word scale.
    step_id: int | None = Field(default=None, foreign_key="step.id", ondelete="CASCADE",
                                index=True)
    word: str | None = Field(default=None, max_length=60)
    number: int = Field(ge=1)
    question: str = Field(min_length=1, max_length=300)
    unit: str = Field(max_length=20)
    state: RoundState = Field(default=RoundState.OPEN, sa_type=AutoString(length=20))
    names_shown: bool = True
    opened_by: str = Field(default="", max_length=120)
    created_at: datetime = Field(default_factory=utc_now, nullable=False)
    updated_at: datetime = Field(default_factory=utc_now, nullable=False)
    agreed_method: str | None = Field(default=None, max_length=20)
    agreed_value: float | None = Field(default=None, gt=0)
    agreed_basis: str = Field(default="", max_length=2000)


class RoundEstimate(SQLModel, table=True):
    """One person's estimate in one round; `session_id` is the device that gave it ('' for
    the scribe typing it), so only that device may change it."""

    __tablename__ = "round_estimate"
    __table_args__ = (Index("uq_round_estimate_person", "round_id", "person", unique=True),)
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()
    round_id: int = Field(foreign_key="estimate_round.id", ondelete="CASCADE", index=True)
    person: str = Field(min_length=1, max_length=120)
    value: float = Field(gt=0)
    value_text: str = Field(default="", max_length=100)
    entered_by: str = Field(default="self", max_length=10)
    session_id: str = Field(default="", max_length=100)
    updated_at: datetime = Field(default_factory=utc_now, nullable=False)


class RoundDissent(SQLModel, table=True):
    """A person who does not accept a round's agreed value, and why."""

    __tablename__ = "round_dissent"
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()
    round_id: int = Field(foreign_key="estimate_round.id", ondelete="CASCADE", index=True)
    person: str = Field(min_length=1, max_length=120)
    reason: str = Field(default="", max_length=1000)
    position: int = 0


class ScaleWord(SQLModel, table=True):
    """A word the team uses for a likelihood ("unlikely") and, once adopted, its number.

    `unit` is the estimate unit (per_year or probability); a word without `value` is on the
    team's list but not adopted, so typing it in a value field is refused.
    """

    __tablename__ = "scale_word"
    id: int | None = Field(default=None, primary_key=True)
    study_id: int = _study_fk()
    unit: str = Field(max_length=20)
    word: str = Field(min_length=1, max_length=60)
    value: float | None = Field(default=None, gt=0)
    position: int = 0


class AccessState(SQLModel, table=True):
    """Who may use a served Tallyroom: one row, never part of a study, an export or the log."""

    __tablename__ = "access_state"
    id: int | None = Field(default=None, primary_key=True)
    # Signs the session cookies; made on first use so each installation has its own.
    secret_key: str = Field(max_length=100)
    # "scrypt$n$r$p$salt$hash" (app/access/passphrase.py); empty until a passphrase is set.
    passphrase_hash: str = Field(default="", max_length=300)
    join_code: str = Field(default="", max_length=20)
    join_code_day: date | None = None
    # Sessions stamped with an older generation are ended (the settings page's "end sessions").
    session_generation: int = 0


class ScenarioResultRow(SQLModel, table=True):
    """One scenario's computed results, kept true in every transaction that changes its inputs.

    The scalar columns are what sums, ranking and the node and study counts read (indexed by
    study and node); `figures` holds the rest as JSON: the governing line and every receptor
    line, as credited and with flagged credits withdrawn, plus an `extra` mapping for fields
    a later method adds (app/services/study/stored_results.py writes and reads it).
    """

    __tablename__ = "scenario_result"
    __table_args__ = (Index("ix_scenario_result_study_node", "study_id", "node_id"),)
    scenario_id: int = Field(foreign_key="scenario.id", ondelete="CASCADE", primary_key=True)
    study_id: int = Field(foreign_key="study.id", ondelete="CASCADE")
    node_id: int = Field(foreign_key="node.id", ondelete="CASCADE")
    computed: bool = False
    incomplete: bool = False
    short: bool = False
    flagged: bool = False
    short_withdrawn: bool = False
    category_id: int | None = None
    gap_orders: float | None = None
    # The headline as lists show it (overview, rankings), read without parsing `figures`.
    receptor: str = Field(default="", max_length=20)
    mitigated_frequency: float | None = None
    tolerable_frequency: float | None = None
    ratio: float | None = None
    sil_label: str = Field(default="", max_length=60)
    demand_mode: str = Field(default="", max_length=20)
    withdrawn_mitigated_frequency: float | None = None
    withdrawn_ratio: float | None = None
    # What the risk picture counts and ranks over the whole study, read without `figures`:
    # the SIL band of the needed added function, the same drawn with flagged credits
    # withdrawn (set only for a flagged scenario), the IPL-check warnings and the verdict's
    # uncertainty (governing line as credited, from the steps' error factors).
    sil_band: str = Field(default="", max_length=40, sa_column_kwargs={"server_default": ""})
    withdrawn_category_id: int | None = None
    withdrawn_gap_orders: float | None = None
    withdrawn_sil_band: str = Field(default="", max_length=40,
                                    sa_column_kwargs={"server_default": ""})
    withdrawn_demand_mode: str = Field(default="", max_length=20,
                                       sa_column_kwargs={"server_default": ""})
    warning_count: int = Field(default=0, sa_column_kwargs={"server_default": "0"})
    uncertain: bool = Field(default=False, sa_column_kwargs={"server_default": false()})
    p_meets: float | None = None
    spread_median: float | None = None
    spread_p05: float | None = None
    spread_p95: float | None = None
    error: str = Field(default="", sa_column_kwargs={"default": ""})
    figures: str = Field(default="{}", sa_type=Text)
    # What the CSV and workbook show of the results, laid out flat (issue 14): JSON written by
    # services/study/table_figures.py, so an export reads and formats, computing nothing.
    table_figures: str = Field(default="", sa_type=Text, sa_column_kwargs={"server_default": ""})


class ResultTotal(SQLModel, table=True):
    """Running counts of one node's scenarios (node_id set) or the whole study's (node_id 0).

    Moved by the difference each recomputed scenario makes, in the same transaction; integer
    counts, so the running value equals a recount exactly. The study's row also says which
    version of the stored results it holds: another version is rebuilt on its next read.
    """

    __tablename__ = "result_total"
    study_id: int = Field(foreign_key="study.id", ondelete="CASCADE", primary_key=True)
    node_id: int = Field(default=0, primary_key=True)
    results_version: int = 0
    scenario_count: int = 0
    short_count: int = 0
    unresolved_count: int = 0
    flagged_count: int = 0
    short_withdrawn_count: int = 0
    incomplete_count: int = 0


def _never_reuse_ids() -> None:
    # SQLite hands out the highest id + 1 unless the table says AUTOINCREMENT, so a deleted
    # row's id comes back and a page still pointing at it would touch someone else's new row.
    # PostgreSQL sequences never go back and ignore this option.
    for table in SQLModel.metadata.tables.values():
        key = [column.name for column in table.primary_key.columns]
        if key == ["id"]:
            table.dialect_kwargs["sqlite_autoincrement"] = True


_never_reuse_ids()
