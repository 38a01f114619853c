"""Agreeing a revealed round: the step takes the value and the basis says how it was reached.

The step's value, typed text and basis are set through the ORM, so the change log records the
agreed value and its basis sentence under the facilitator's name (app/db/tracking.py).
"""

from dataclasses import dataclass

from sqlmodel import Session

from app.db.models import EstimateRound, RoundDissent, RoundState, Step, text_limit, utc_now
from app.likelihood.agreement import Agreement, AgreementMethod, Dissent, agreed_value
from app.likelihood.agreement import agreement_basis as basis_sentence
from app.likelihood.numbers import format_number
from app.likelihood.types import LikelihoodInputError
from app.services.estimates.reading import parse_estimate
from app.services.estimates.rounds import (
    claim_state,
    estimates_of,
    get_round,
    get_step,
    stats_of,
    unit_for,
)
from app.services.study.errors import FieldInputError, nul_problem


@dataclass(frozen=True)
class AgreementForm:
    """What the facilitator submitted: the method, a typed value (for 'typed'), dissent lines."""

    method: str
    typed_text: str = ""
    dissent_lines: str = ""


def parse_dissents(lines: str) -> tuple[Dissent, ...]:
    """One dissent per line, 'Name: reason' (the reason may be left out)."""
    if problem := nul_problem(lines):
        raise FieldInputError("dissents", f"Dissents {problem}")
    found = []
    for line in lines.splitlines():
        person, _, reason = line.partition(":")
        if not line.strip():
            continue
        if not person.strip():
            raise FieldInputError("dissents", "Dissents: each line starts with the person's "
                                              "name, then a colon and the reason.")
        found.append(Dissent(person=" ".join(person.split())[:120],
                             reason=" ".join(reason.split())[:1000]))
    return tuple(found)


def _method(text: str) -> AgreementMethod:
    try:
        return AgreementMethod(text)
    except ValueError:
        raise FieldInputError("method", "Agree on: choose the geometric mean, the median or "
                                        "a typed value.") from None


def build_agreement(session: Session, found: EstimateRound, form: AgreementForm) -> Agreement:
    """The Agreement the likelihood package judges, from the round and the form."""
    stats = stats_of(found, estimates_of(session, found.id or 0))
    if stats is None:
        raise FieldInputError("method", "Agree: nobody has answered this round.")
    method = _method(form.method)
    typed = None
    if method == AgreementMethod.TYPED:
        typed = parse_estimate(form.typed_text, unit_for(found), "Agreed value").value
    return Agreement(round_number=found.number, stats=stats, method=method,
                     typed_value=typed, dissents=parse_dissents(form.dissent_lines))


def agree_round(*, session: Session, study_id: int, round_id: int,
                form: AgreementForm) -> Step:
    """Set the step's value and basis from a revealed round and record its dissents."""
    found = get_round(session, study_id, round_id)
    if found.state != RoundState.REVEALED:
        raise FieldInputError("method", "Agree: reveal the round first (an agreed round "
                                        "stays as it is; open another round to change it).")
    if found.step_id is None:
        raise FieldInputError("method", "Agree: a word round is adopted on the word scale "
                                        "page, not on a step.")
    agreement = build_agreement(session, found, form)
    try:
        value, basis = agreed_value(agreement), basis_sentence(agreement)
    except LikelihoodInputError as error:
        raise FieldInputError("typed_text", error.message) from error
    if not claim_state(session, found, RoundState.REVEALED, RoundState.AGREED):
        session.rollback()
        raise FieldInputError("method", "Agree: this round was agreed on another screen a "
                                        "moment ago, so nothing was changed here; reload the "
                                        "round to see the value it agreed.")
    step = get_step(session, study_id, found.step_id)
    step.value, step.value_text = value, format_number(value)
    step.basis = basis[: text_limit(Step, "basis")]
    _record(session, found, agreement, value, basis)
    session.add(step)
    session.commit()
    return step


def _record(session: Session, found: EstimateRound, agreement: Agreement, value: float,
            basis: str) -> None:
    found.state = RoundState.AGREED
    found.agreed_method = agreement.method.value
    found.agreed_value = value
    found.agreed_basis = basis[: text_limit(EstimateRound, "agreed_basis")]
    found.updated_at = utc_now()
    session.add(found)
    for position, dissent in enumerate(agreement.dissents):
        session.add(RoundDissent(study_id=found.study_id, round_id=found.id or 0,
                                 person=dissent.person, reason=dissent.reason,
                                 position=position))
