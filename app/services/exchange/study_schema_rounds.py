"""The study file's estimate rounds and team word scale (optional keys of schema version 2).

A round names its step by the scenario's ref and the step's place among that scenario's
steps (1 = first), or names a word of the team's word scale. An open round travels without
its estimates: they stay private until the reveal, in a file as on the screen.

Each rule below raises a message that starts with the rule's name in brackets, so an import
refused for it says which rule it broke.
"""

from collections import Counter
from datetime import datetime
from typing import Final, Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator, model_validator

from app.db.models import RoundState
from app.likelihood.agreement import AgreementMethod
from app.likelihood.estimates import EstimateUnit, unit_for_kind
from app.likelihood.types import LikelihoodInputError, StepKind
from app.likelihood.word_scale import adopt_word_scale
from app.services.study.errors import nul_problem

MAX_ESTIMATES_PER_ROUND: Final = 200
"""More people than any review room holds; the list is refused beyond it."""
MAX_ROUND_NUMBER: Final = 10_000
"""Far beyond any meeting's rounds on one question; keeps numbers inside every integer column."""
STAND_IN_NUMBER: Final = 0.5  # valid in both units: checks the word rules of words not adopted


class FileRow(BaseModel):
    """As study_schema.FileRow (which imports this module): strict, no unknown keys, no NUL."""

    model_config = ConfigDict(extra="forbid")

    @field_validator("question", "word", "person", "reason", "value_text", "opened_by",
                     "agreed_basis", mode="after", check_fields=False)
    @classmethod
    def no_nul_in_text(cls, value: str | None) -> str | None:
        """PostgreSQL refuses NUL in text: the file is refused instead, saying where."""
        if value is not None and (problem := nul_problem(value)):
            raise ValueError(problem)
        return value


def _rule(name: str, text: str) -> ValueError:
    return ValueError(f"[{name}] {text}")


class RoundEstimateRow(FileRow):
    """One person's estimate; `entered_by` says whether they gave it or the scribe typed it."""

    person: str = Field(min_length=1, max_length=120)
    value: float = Field(gt=0, allow_inf_nan=False)
    value_text: str = Field(default="", max_length=100)
    entered_by: Literal["self", "scribe"] = "self"


class RoundDissentRow(FileRow):
    """A person who did not accept the agreed value, and why."""

    person: str = Field(min_length=1, max_length=120)
    reason: str = Field(default="", max_length=1000)


class EstimateRoundRow(FileRow):
    """One private round of estimates on a step's value or on a word, and how it ended."""

    scenario: str | None = Field(default=None, description="ref of the step's scenario")
    step: int | None = Field(default=None, ge=1, le=MAX_ROUND_NUMBER,
                             description="the step's place in its scenario, 1 = first")
    word: str | None = Field(default=None, min_length=1, max_length=60)
    number: int = Field(ge=1, le=MAX_ROUND_NUMBER)
    question: str = Field(min_length=1, max_length=300)
    unit: EstimateUnit
    state: RoundState
    names_shown: bool = True
    opened_by: str = Field(default="", max_length=120)
    opened_at: datetime | None = None
    agreed_method: AgreementMethod | None = None
    agreed_value: float | None = Field(default=None, gt=0, allow_inf_nan=False)
    agreed_basis: str = Field(default="", max_length=2000)
    estimates: list[RoundEstimateRow] = Field(default=[],
                                              max_length=MAX_ESTIMATES_PER_ROUND)
    dissents: list[RoundDissentRow] = Field(default=[], max_length=MAX_ESTIMATES_PER_ROUND)

    @model_validator(mode="after")
    def on_a_step_or_a_word(self) -> "EstimateRoundRow":
        """A round asks about one step (scenario and step given) or one word, never both."""
        on_step = self.scenario is not None and self.step is not None
        half_step = (self.scenario is None) != (self.step is None)
        if half_step or on_step == (self.word is not None):
            raise _rule("round_target", "a round names either a step (scenario and step) "
                                        "or a word, and only one of them")
        return self

    @model_validator(mode="after")
    def estimates_fit_the_state(self) -> "EstimateRoundRow":
        """Open rounds carry no estimates; shown rounds at least one, each person once."""
        if self.state == RoundState.OPEN and self.estimates:
            raise _rule("open_round_private", "an open round carries no estimates: they "
                                              "stay private until the reveal")
        if self.state != RoundState.OPEN and not self.estimates:
            raise _rule("revealed_round_estimates", f"a {self.state.value} round needs the "
                                                    "estimates that were revealed")
        repeated = [p for p, n in Counter(e.person for e in self.estimates).items() if n > 1]
        if repeated:
            raise _rule("one_estimate_each", f"{repeated[0]} gives two estimates in round "
                                             f"{self.number}; one per person and round")
        for estimate in self.estimates:
            _within_unit(estimate.value, self.unit, f"{estimate.person}'s estimate")
        return self

    @model_validator(mode="after")
    def agreement_fits_the_state(self) -> "EstimateRoundRow":
        """Only an agreed (or, for a word, adopted) round has an agreed value and dissents."""
        agreed = self.state == RoundState.AGREED
        has_outcome = self.agreed_value is not None or self.agreed_method is not None
        if agreed and (self.agreed_value is None or self.agreed_method is None):
            raise _rule("agreed_value", "an agreed round needs agreed_value and agreed_method")
        if not agreed and (has_outcome or self.dissents):
            raise _rule("agreed_value", f"a {self.state.value} round has no agreed value, "
                                        "method or dissents yet")
        if self.agreed_value is not None:
            _within_unit(self.agreed_value, self.unit, "the agreed value")
        return self


class ScaleWordRow(FileRow):
    """A word of the team's word scale and, once adopted, the number it stands for."""

    unit: EstimateUnit
    word: str = Field(min_length=1, max_length=60)
    value: float | None = Field(default=None, gt=0, allow_inf_nan=False)


def _within_unit(value: float, unit: EstimateUnit, what: str) -> None:
    if unit == EstimateUnit.PROBABILITY and value > 1:
        raise _rule("probability_at_most_one", f"{what} is a probability, so at most 1 "
                                               f"(got {value})")


def check_word_scale(words: list[ScaleWordRow]) -> None:
    """Each unit's words obey the word scale's rules (not repeated, not reading as a number)."""
    for unit in EstimateUnit:
        listed = [(row.word, row.value or STAND_IN_NUMBER) for row in words if row.unit == unit]
        try:
            adopt_word_scale(listed, unit)
        except LikelihoodInputError as error:
            raise _rule(error.rule, error.message) from None


def check_round_targets(rounds: list[EstimateRoundRow],
                        step_kinds: dict[str, list[StepKind]]) -> None:
    """Every round's step exists in this file, its unit is the step's, numbers do not repeat."""
    seen: set[tuple[str, int | str, str, int]] = set()
    for found in rounds:
        if found.scenario is not None and found.step is not None:
            kinds = step_kinds.get(found.scenario)
            if kinds is None:
                raise _rule("round_target", f"round {found.number} names scenario ref "
                                            f"'{found.scenario}', which is not defined in "
                                            "this file")
            if found.step > len(kinds):
                raise _rule("round_target", f"scenario '{found.scenario}' has "
                                            f"{len(kinds)} steps; round {found.number} names "
                                            f"step {found.step}")
            if unit_for_kind(kinds[found.step - 1]) != found.unit:
                raise _rule("round_unit", f"round {found.number} on step {found.step} of "
                                          f"'{found.scenario}' must be in "
                                          f"{unit_for_kind(kinds[found.step - 1]).value}")
        target = (found.scenario or "", found.step or found.word or "", found.unit.value,
                  found.number)
        if target in seen:
            raise _rule("round_number_unique", f"round {found.number} on the same step or "
                                               "word is listed twice")
        seen.add(target)
