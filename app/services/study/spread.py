"""The uncertainty of a scenario's mitigated frequency, from its steps' error factors.

Pure functions of a scenario's steps, its targets and what the EF precedence reads besides the
step (the last estimate round's numbers per step and the study's defaults per step kind); one
loader (`load_error_factor_inputs`) reads those two from the database. Every entered value is
the median of a lognormal; the engine is `app/likelihood/uncertainty.py`.
"""

from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from sqlalchemy import bindparam
from sqlalchemy import select as select_columns
from sqlmodel import Session, col

from app.db.models import EstimateRound, RoundEstimate, RoundState, Study
from app.db.queries import fetch_plain_rows
from app.likelihood.numbers import format_error_factor, format_number
from app.likelihood.receptors import ReceptorAssessment, assess_receptors
from app.likelihood.types import (
    LikelihoodInputError,
    Receptor,
    StepInput,
    StepKind,
    input_error,
)
from app.likelihood.typical import typical_by_key
from app.likelihood.uncertainty import (
    ErrorFactor,
    ErrorFactorSource,
    ScenarioDistribution,
    UncertainStep,
    VerdictConfidence,
    choose_error_factor,
    judge_action,
    line_distribution,
)
from app.services.study.remembered import Remembered
from app.services.study.results import StoredStep, Targets, steps_for_receptor
from app.services.study.step_fields import modifier_kind_of, receptor_set

MEDIAN_NOTE = "Each entered value is taken as the median (50th percentile) of a lognormal."


def default_column(kind: StepKind) -> str:
    """The Study column holding the study's default EF for one step kind."""
    return f"error_factor_default_{kind.value}"


@dataclass(frozen=True)
class LastRound:
    """A step's last revealed or agreed estimate round: its number and the estimates."""

    number: int
    estimates: tuple[float, ...]


@dataclass(frozen=True)
class ErrorFactorInputs:
    """What the EF precedence reads besides the step itself."""

    last_rounds: Mapping[int, LastRound] = field(default_factory=dict)
    defaults: Mapping[StepKind, float] = field(default_factory=dict)


NO_INPUTS = ErrorFactorInputs()


def study_defaults(study: Any) -> dict[StepKind, float]:
    """The study's default EF per step kind (kinds without one left out); Any: a Study row."""
    found = {kind: getattr(study, default_column(kind), None) for kind in StepKind}
    return {kind: float(value) for kind, value in found.items() if value is not None}


# session.info key: the inputs the last stored-results refresh of this session read, so the
# reply to the same edit does not read the study row and its rounds again after the commit.
_REFRESHED_INPUTS = "error_factor_inputs_of_refresh"


def remember_refreshed_inputs(session: Session, study_id: int, step_ids: Iterable[int],
                              inputs: ErrorFactorInputs) -> None:
    """Keep what a refresh read for these steps (replacing what an earlier refresh kept)."""
    kept: dict[int, tuple[frozenset[int], ErrorFactorInputs]] = session.info.setdefault(
        _REFRESHED_INPUTS, {})
    kept[study_id] = (frozenset(step_ids), inputs)


def forget_refreshed_inputs(session: Session) -> None:
    """Drop what an earlier refresh kept (a new transaction's refresh starts afresh)."""
    session.info.pop(_REFRESHED_INPUTS, None)


def refreshed_inputs(session: Session, study_id: int,
                     step_ids: Iterable[int]) -> ErrorFactorInputs | None:
    """The inputs the refresh just read, taken once, when they cover these steps (else None:
    a step added since is read afresh)."""
    remembered: dict[int, tuple[frozenset[int], ErrorFactorInputs]] = session.info.get(
        _REFRESHED_INPUTS, {})
    kept = remembered.pop(study_id, None)
    if kept is None or not kept[0].issuperset(step_ids):
        return None
    return kept[1]


_COUNTED_STATES = [RoundState.REVEALED, RoundState.AGREED]
# Built once (an edit reads its own scenario's rounds on every keystroke; building and
# looking up a statement cost more than running it).
_ROUNDS_OF_STUDY = (select_columns(col(EstimateRound.id), col(EstimateRound.step_id),
                                   col(EstimateRound.number))
                    .where(col(EstimateRound.study_id) == bindparam("study_id"),
                           col(EstimateRound.step_id).is_not(None),
                           col(EstimateRound.state).in_(_COUNTED_STATES)))
_ROUNDS_OF_STEPS = _ROUNDS_OF_STUDY.where(
    col(EstimateRound.step_id).in_(bindparam("step_ids", expanding=True)))
_ESTIMATES_OF_ROUNDS = (select_columns(col(RoundEstimate.round_id), col(RoundEstimate.value))
                        .where(col(RoundEstimate.round_id).in_(
                            bindparam("round_ids", expanding=True))))
_STUDY_DEFAULTS = (select_columns(*(getattr(Study, default_column(kind)) for kind in StepKind))
                   .where(col(Study.id) == bindparam("study_id")))


def load_error_factor_inputs(session: Session, study: Study,
                             step_ids: Sequence[int] | None = None) -> ErrorFactorInputs:
    """The study's defaults and each step's last revealed or agreed round, in two queries
    (only the rounds of `step_ids` when given: an edit reads its own scenario's)."""
    return ErrorFactorInputs(_last_rounds(session, study.id or 0, step_ids),
                             study_defaults(study))


def load_scenario_inputs(session: Session, study_id: int,
                         step_ids: Sequence[int]) -> ErrorFactorInputs | None:
    """load_error_factor_inputs for some steps, from the study's id (its row read as plain
    columns, not loaded as an object); None when there is no such study."""
    defaults = fetch_plain_rows(session, _STUDY_DEFAULTS, {"study_id": study_id})
    if not defaults:
        return None
    return ErrorFactorInputs(_last_rounds(session, study_id, step_ids),
                             study_defaults(defaults[0]))


def _last_rounds(session: Session, study_id: int,
                 step_ids: Sequence[int] | None) -> dict[int, LastRound]:
    """Each step's last revealed or agreed round with its estimates (all steps' when None)."""
    rounds = (fetch_plain_rows(session, _ROUNDS_OF_STUDY, {"study_id": study_id})
              if step_ids is None else
              fetch_plain_rows(session, _ROUNDS_OF_STEPS,
                               {"study_id": study_id, "step_ids": list(step_ids)}))
    last: dict[int, tuple[int, int]] = {}
    for round_id, step_id, number in map(tuple, rounds):
        if step_id not in last or number > last[step_id][1]:
            last[step_id] = (round_id, number)
    wanted = {round_id: step_id for step_id, (round_id, _) in last.items()}
    values: dict[int, list[float]] = {step_id: [] for step_id in last}
    if wanted:
        for round_id, value in map(tuple, fetch_plain_rows(
                session, _ESTIMATES_OF_ROUNDS, {"round_ids": list(wanted)})):
            values[wanted[round_id]].append(float(value))
    return {step_id: LastRound(last[step_id][1], tuple(sorted(found)))
            for step_id, found in values.items()}


def step_error_factor(step: StoredStep, inputs: ErrorFactorInputs) -> ErrorFactor:
    """The first EF available: typed > last round's spread > typical range > study default."""
    typed = getattr(step, "error_factor", None)
    last = inputs.last_rounds.get(step.id or 0)
    row = typical_by_key(str(getattr(step, "typical_key", "") or ""))
    return choose_error_factor(
        kind=step.kind, typed=typed, last_round=last.estimates if last else (),
        typical_range=(row.low, row.high) if row is not None else None,
        study_defaults=inputs.defaults)


def error_factor_note(factor: ErrorFactor, kind: StepKind, round_number: int | None) -> str:
    """Which source gave a step's EF, in words: "EF 3, typed", "EF 4.1, from round 2's spread"."""
    if factor.value is None:
        return "no EF: taken as exact"
    shown = f"EF {format_error_factor(factor.value)}"
    source = {
        ErrorFactorSource.TYPED: "typed",
        ErrorFactorSource.ESTIMATE_ROUND: f"from round {round_number or '?'}'s spread",
        ErrorFactorSource.TYPICAL_RANGE: "from the typical-value range",
        ErrorFactorSource.STUDY_DEFAULT: f"study default for {kind.words}s",
    }.get(factor.source, "")
    return f"{shown}, {source}"


@dataclass(frozen=True)
class LineSpread:
    """One receptor line's distribution of the mitigated frequency."""

    receptor: Receptor
    distribution: ScenarioDistribution

    @property
    def uncertain(self) -> bool:
        """The verdict could go either way: 5 % < P(meets) < 95 %."""
        return self.distribution.confidence is VerdictConfidence.UNCERTAIN


@dataclass(frozen=True)
class StepSpreadNote:
    """One step's EF and where it came from, keyed by the stored step's id."""

    step_id: int | None
    kind: StepKind
    label: str
    factor: ErrorFactor
    round_number: int | None = None

    @property
    def note(self) -> str:
        """"EF 3, typed" and so on (worded only when shown: most scenarios never are)."""
        return error_factor_note(self.factor, self.kind, self.round_number)


@dataclass(frozen=True)
class ScenarioSpread:
    """A scenario's distribution per rated receptor; `governing` is the headline line's."""

    governing: LineSpread
    lines: tuple[LineSpread, ...]
    notes: tuple[StepSpreadNote, ...]

    def note_of(self, step_id: int | None) -> str:
        """The EF and its source for one step ("" for a step not in this scenario)."""
        return next((n.note for n in self.notes if n.step_id == step_id), "")

    def line_of(self, receptor: Receptor) -> LineSpread | None:
        """One receptor line's distribution, if that receptor is rated."""
        return next((line for line in self.lines if line.receptor is receptor), None)


LineKey = tuple[tuple[Receptor, float, float, bool], ...]
"""Each computed line as (receptor, mitigated, tolerable, meets): what the spread reads of it."""


def _fresh_lines(paired: tuple[tuple[StepInput, ErrorFactor], ...],
                 computed: LineKey) -> tuple[LineSpread, ...]:
    """Each rated receptor's distribution around its already computed line."""
    steps = [step for step, _ in paired]
    lines = []
    for receptor, mitigated, tolerable, meets in computed:
        kept = set(map(id, steps_for_receptor(steps, receptor)))
        uncertain = [UncertainStep(step, factor) for step, factor in paired if id(step) in kept]
        lines.append(LineSpread(receptor, line_distribution(uncertain, mitigated, tolerable,
                                                            meets)))
    return tuple(lines)


# Cached on its frozen inputs, like results.assess: a page showing a whole study recomputes only
# the scenarios whose numbers or error factors changed. A pass that reads every scenario once
# (remember=False) computes without it, so the server keeps no study-sized cache after it (the
# exports compute no spread: they read the stored one, see table_figures.py).
_lines = Remembered(_fresh_lines, 65_536)


def scenario_spread(steps: Iterable[StoredStep], targets: Targets,
                    inputs: ErrorFactorInputs = NO_INPUTS,
                    receptors: ReceptorAssessment | None = None, *,
                    remember: bool = True) -> ScenarioSpread | None:
    """The scenario's lognormal per receptor line; None without targets or with invalid steps.

    `receptors` is the scenario's computed assessment as credited when the caller has it (the
    medians and verdicts are not computed twice); otherwise it is computed here. `remember`
    False: computed without the cache (a whole-study export).
    """
    ordered = sorted(steps, key=lambda s: (s.position, s.id or 0))
    if not targets or any(getattr(s, "value", None) is None for s in ordered):
        return None
    try:
        inputs_of = [_step_input(s) for s in ordered]
        factors = [step_error_factor(s, inputs) for s in ordered]
        found = receptors or assess_receptors(inputs_of, dict(targets))
        computed = tuple((line.receptor, line.mitigated_frequency, line.tolerable_frequency,
                          line.meets_target) for line in found.lines)
        paired = tuple(zip(inputs_of, factors, strict=True))
        lines = (_lines if remember else _fresh_lines)(paired, computed)
    except LikelihoodInputError:
        return None
    notes = tuple(StepSpreadNote(s.id, s.kind, s.description, f, _round_number(inputs, s.id))
                  for s, f in zip(ordered, factors, strict=True))
    line = next(x for x in lines if x.receptor is found.governing.receptor)
    return ScenarioSpread(line, lines, notes)


def _step_input(step: StoredStep) -> StepInput:
    """What the spread reads of a stored step: as checked_step gives it, without the checks'
    fields (a fifth of the time on a 10,000-scenario page)."""
    if step.value is None:  # an incomplete scenario: scenario_spread has none
        raise input_error("value_missing", "no value yet.", label=step.description)
    return StepInput(step.kind, step.value, step.description, step.credited,
                     modifier_kind=modifier_kind_of(getattr(step, "modifier_kind", None)),
                     receptors=receptor_set(getattr(step, "receptors", None)))


def _round_number(inputs: ErrorFactorInputs, step_id: int | None) -> int | None:
    last = inputs.last_rounds.get(step_id or 0)
    return last.number if last else None


@dataclass(frozen=True)
class ActionEffect:
    """P(meets the target) before and after an action's expected risk reduction."""

    before: float
    after: float
    median_after: float
    p95_after: float


def action_effect(spread: ScenarioSpread, expected_rrf: float | None) -> ActionEffect | None:
    """The governing line judged before and after dividing by the action's expected RRF."""
    if expected_rrf is None or expected_rrf < 1:
        return None
    judged = judge_action(spread.governing.distribution, 1 / expected_rrf)
    return ActionEffect(judged.before.probability_meets_target,
                        judged.after.probability_meets_target,
                        judged.after.median, judged.after.p95)


def uncertain_first(spreads: Sequence[tuple[Any, ScenarioSpread]]) -> list[tuple[Any, float]]:
    """The items whose governing verdict is uncertain, with P(meets), lowest probability first.

    Any: whatever the caller pairs with each spread (a scenario row, a ranked line).
    """
    found = [(item, s.governing.distribution.probability_meets_target)
             for item, s in spreads if s.governing.uncertain]
    return sorted(found, key=lambda pair: pair[1])


def band_text(distribution: ScenarioDistribution) -> str:
    """The 5-95 % band in the app's number format ("3.1e-6 to 4.2e-4")."""
    return f"{format_number(distribution.p05)} to {format_number(distribution.p95)}"
