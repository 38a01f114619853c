"""Reading an estimate as people say it, in the round's unit, and naming a round's question."""

from app.db.models import Step
from app.likelihood.estimates import ESTIMATE_UNIT_LABELS, EstimateUnit, unit_for_kind
from app.likelihood.numbers import ParsedNumber, parse_frequency, parse_probability
from app.likelihood.types import LikelihoodInputError, StepKind
from app.services.study.errors import FieldInputError


def parse_estimate(text: str, unit: EstimateUnit, label: str = "Estimate") -> ParsedNumber:
    """A frequency for a per-year round, a probability otherwise; FieldInputError when invalid."""
    try:
        if unit == EstimateUnit.PER_YEAR:
            return parse_frequency(text, label)
        return parse_probability(text, label)
    except LikelihoodInputError as error:
        raise FieldInputError("value_text", error.message) from error


def unit_words(unit: str) -> str:
    """'per year' or 'probability' for a stored unit."""
    return ESTIMATE_UNIT_LABELS[EstimateUnit(unit)]


def suggested_question(step: Step) -> str:
    """A question in words for the step, which the facilitator may rewrite."""
    what = step.description.strip() or step.kind.words
    if unit_for_kind(step.kind) == EstimateUnit.PER_YEAR:
        return f"How often does “{what}” happen, per year?"
    if step.kind == StepKind.IPL:
        return f"What is the probability that “{what}” fails when it is needed?"
    return f"What is the probability of “{what}”?"


def step_unit_words(step: Step) -> str:
    """The unit a round on this step asks for: 'per year' or 'probability'."""
    return ESTIMATE_UNIT_LABELS[unit_for_kind(step.kind)]
