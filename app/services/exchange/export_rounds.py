"""The estimate rounds and the team word scale as the report and the workbook show them.

Read from the exported study file (`StudyData`), so a frozen revision's report shows its own
rounds. A round's figures (lowest, highest, spread in orders of magnitude, geometric mean,
median) come from the likelihood package's `round_stats`, the same as the room view's. Where
the facilitator hid the names on the room view, the exports number the people instead. An
open round's estimates are never in the file, so never here.
"""

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from app.likelihood.agreement import AGREEMENT_METHOD_LABELS, AgreementMethod
from app.likelihood.estimates import (
    ESTIMATE_UNIT_LABELS,
    EstimateUnit,
    RoundStats,
    round_stats,
)
from app.likelihood.types import LikelihoodInputError, step_kind_words
from app.services.exchange.export_tables import (
    SCIENTIFIC,
    WHOLE,
    Cell,
    Column,
    StudyData,
    Table,
)

SPREAD = "0.00"
STATE_WORDS = {"open": "open (answers hidden)", "revealed": "revealed", "agreed": "agreed"}


@dataclass(frozen=True)
class EstimateLine:
    """One person's estimate as said and as a number; `scribe` when the scribe typed it."""

    person: str
    value: float
    said: str
    scribe: bool


@dataclass(frozen=True)
class RoundSummary:
    """One round as the report lists it, with its figures (None while nobody has answered)."""

    scenario: str
    step: str
    word: str
    number: int
    question: str
    unit: str
    state: str
    opened_by: str
    estimates: tuple[EstimateLine, ...]
    stats: RoundStats | None
    agreed_method: str
    agreed_value: float | None
    agreed_basis: str
    dissents: tuple[tuple[str, str], ...]

    @property
    def target(self) -> str:
        """'Scenario 2.1.1, enabling condition 'Ullage …'' or 'Word 'rare''."""
        if self.word:
            return f"Word '{self.word}'"
        return f"Scenario {self.scenario}, {self.step}"


StepWords = Mapping[tuple[str, int], str]


def step_words(kind: str, description: str) -> str:
    """"enabling condition 'Ullage …'"."""
    return f"{step_kind_words(kind)} '{description}'"


def _step_words(data: StudyData) -> dict[tuple[str, int], str]:
    """(scenario ref, place) -> "enabling condition 'Ullage …'"."""
    return {(s["ref"], place): step_words(step["kind"], step["description"])
            for n in data["nodes"] for d in n["deviations"] for s in d["scenarios"]
            for place, step in enumerate(s["steps"], 1)}


def _stats(values: Sequence[float], unit: EstimateUnit) -> RoundStats | None:
    try:
        return round_stats(values, unit) if values else None
    except LikelihoodInputError:  # a stored value out of range: listed, not summarised
        return None


def _estimates(found: StudyData) -> tuple[EstimateLine, ...]:
    shown = found.get("names_shown", True)
    return tuple(EstimateLine(e["person"] if shown else f"participant {index}", e["value"],
                              e.get("value_text", ""), e.get("entered_by") == "scribe")
                 for index, e in enumerate(found["estimates"], 1))


def round_summaries(data: StudyData, numbers: dict[str, str] | None = None,
                    steps_named: StepWords | None = None) -> tuple[RoundSummary, ...]:
    """Every round of the file, steps' rounds in worksheet order, then the words'.
    `steps_named`: the words of the steps rounds ask about, when `data` has no nodes."""
    named = numbers or {}
    steps = _step_words(data) if steps_named is None else steps_named
    summaries = []
    for found in data.get("estimate_rounds", []):
        unit = EstimateUnit(found["unit"])
        estimates = _estimates(found)
        method = found.get("agreed_method")
        ref, place = found.get("scenario"), found.get("step")
        summaries.append(RoundSummary(
            scenario=named.get(ref, ref) if ref else "",
            step=steps.get((ref, place), f"step {place}") if ref else "",
            word=found.get("word") or "", number=found["number"], question=found["question"],
            unit=ESTIMATE_UNIT_LABELS[unit], state=STATE_WORDS.get(found["state"], ""),
            opened_by=found.get("opened_by", ""), estimates=estimates,
            stats=_stats([e.value for e in estimates], unit),
            agreed_method=AGREEMENT_METHOD_LABELS[AgreementMethod(method)] if method else "",
            agreed_value=found.get("agreed_value"), agreed_basis=found.get("agreed_basis", ""),
            dissents=tuple((d["person"], d["reason"]) for d in found.get("dissents", []))))
    return tuple(summaries)


ROUND_COLUMNS = (
    Column("Scenario"), Column("Step"), Column("Word"), Column("Round", WHOLE),
    Column("Question"), Column("Unit"), Column("State"), Column("Estimates", WHOLE),
    Column("Lowest", SCIENTIFIC), Column("Highest", SCIENTIFIC),
    Column("Spread (orders of magnitude)", SPREAD), Column("Geometric mean", SCIENTIFIC),
    Column("Median", SCIENTIFIC), Column("Talk it over (spread > 1 order)"),
    Column("Agreed by"), Column("Agreed value", SCIENTIFIC), Column("Agreed basis"),
    Column("Dissents"), Column("Opened by"),
)  # fmt: skip


def _round_row(summary: RoundSummary) -> list[Cell]:
    stats = summary.stats
    figures: list[Cell] = ([stats.lowest, stats.highest, stats.spread_orders,
                            stats.geometric_mean, stats.median, "yes" if stats.discuss else "no"]
                           if stats else [None] * 6)
    return [summary.scenario, summary.step, summary.word, summary.number, summary.question,
            summary.unit, summary.state, len(summary.estimates), *figures,
            summary.agreed_method, summary.agreed_value, summary.agreed_basis,
            "; ".join(f"{person}: {reason}" for person, reason in summary.dissents),
            summary.opened_by]


def rounds_table(summaries: Sequence[RoundSummary]) -> Table:
    """One row per round: what was asked, the figures of the estimates and the outcome."""
    return Table("Estimate rounds", ROUND_COLUMNS, [_round_row(s) for s in summaries])


ESTIMATE_COLUMNS = (
    Column("Scenario"), Column("Step"), Column("Word"), Column("Round", WHOLE),
    Column("Person"), Column("Estimate", SCIENTIFIC), Column("As said"), Column("Unit"),
    Column("Typed by the scribe"),
)  # fmt: skip


def estimates_table(summaries: Sequence[RoundSummary]) -> Table:
    """One row per revealed estimate (an open round's stay private, so none are listed)."""
    rows: list[list[Cell]] = [
        [s.scenario, s.step, s.word, s.number, e.person, e.value, e.said, s.unit,
         "yes" if e.scribe else "no"]
        for s in summaries for e in s.estimates]
    return Table("Estimates", ESTIMATE_COLUMNS, rows)


def word_scale_table(data: StudyData) -> Table:
    """The team's words with the number each stands for once adopted."""
    columns = (Column("Word"), Column("Unit"), Column("Adopted number", SCIENTIFIC))
    rows: list[list[Cell]] = [
        [w["word"], ESTIMATE_UNIT_LABELS[EstimateUnit(w["unit"])], w["value"]]
        for w in data.get("word_scale", [])]
    return Table("Word scale", columns, rows)


def round_tables(data: StudyData, numbers: dict[str, str] | None = None,
                 steps_named: StepWords | None = None) -> tuple[Table, ...]:
    """The workbook's sheets of rounds, estimates and the word scale."""
    summaries = round_summaries(data, numbers, steps_named)
    return rounds_table(summaries), estimates_table(summaries), word_scale_table(data)
