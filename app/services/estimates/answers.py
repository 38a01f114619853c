"""Answers in an open round: each person's own, from their device or typed by the scribe.

A device may change only the estimate it gave (the estimate keeps the session id of the
device); the scribe's typed estimates have none and only an editor may change them.
"""

from dataclasses import dataclass

from sqlalchemy.exc import IntegrityError
from sqlmodel import Session, select

from app.db.models import EstimateRound, RoundEstimate, RoundState, utc_now
from app.likelihood.numbers import ParsedNumber
from app.services.estimates.reading import parse_estimate
from app.services.estimates.rounds import get_round, unit_for
from app.services.study.errors import FieldInputError, nul_problem

SELF = "self"
SCRIBE = "scribe"


@dataclass(frozen=True)
class Answerer:
    """Who gives an estimate: the person's name, and the device (None: the scribe types it)."""

    person: str
    device: str | None


def _open(session: Session, study_id: int, round_id: int) -> EstimateRound:
    found = get_round(session, study_id, round_id)
    if found.state != RoundState.OPEN:
        raise FieldInputError("value_text", "This round is closed: its estimates have been "
                                            "shown to the room. Wait for the next round.")
    return found


def _person(name: str) -> str:
    if problem := nul_problem(name):
        raise FieldInputError("person", f"Name {problem}")
    person = " ".join(name.split())[:120]
    if not person:
        raise FieldInputError("person", "Name: an estimate needs the name of the person "
                                        "who gives it.")
    return person


def _existing(session: Session, round_id: int, person: str) -> RoundEstimate | None:
    return session.exec(select(RoundEstimate).where(RoundEstimate.round_id == round_id,
                                                    RoundEstimate.person == person)).first()


def _may_change(existing: RoundEstimate, answerer: Answerer) -> bool:
    if answerer.device is None:  # the scribe may retype what the scribe typed
        return existing.entered_by == SCRIBE
    return existing.entered_by == SELF and existing.session_id == answerer.device


def give_estimate(*, session: Session, study_id: int, round_id: int, answerer: Answerer,
                  text: str) -> ParsedNumber:
    """Save (or change) one person's estimate in an open round; the value as read back."""
    found = _open(session, study_id, round_id)
    person = _person(answerer.person)
    parsed = parse_estimate(text, unit_for(found))
    try:
        _save(session, study_id, round_id, person, answerer, parsed)
    except IntegrityError:
        # Two devices sent this name at the same moment: both found no estimate, the unique
        # index (round, person) let the first in. Read again and judge as if it came second.
        session.rollback()
        _save(session, study_id, round_id, person, answerer, parsed)
    return parsed


def _save(session: Session, study_id: int, round_id: int, person: str, answerer: Answerer,
          parsed: ParsedNumber) -> None:
    existing = _existing(session, round_id, person)
    if existing is not None and not _may_change(existing, answerer):
        raise FieldInputError("person", f"Name: {person} has already answered this round "
                                        "from another device (or the scribe typed it). One "
                                        "estimate per person and round: if that was not you, "
                                        "join again under your own name.")
    estimate = existing or RoundEstimate(study_id=study_id, round_id=round_id, person=person,
                                         value=parsed.value)
    estimate.value, estimate.value_text = parsed.value, parsed.text[:100]
    estimate.entered_by = SCRIBE if answerer.device is None else SELF
    estimate.session_id = answerer.device or ""
    estimate.updated_at = utc_now()
    session.add(estimate)
    session.commit()


def own_estimate(session: Session, round_id: int, answerer: Answerer) -> ParsedNumber | None:
    """The estimate this device gave in the round, read back; None if it gave none."""
    existing = _existing(session, round_id, " ".join(answerer.person.split()))
    if existing is None or not _may_change(existing, answerer):
        return None
    found = session.get(EstimateRound, round_id)
    assert found is not None  # the estimate's round exists (foreign key)
    return parse_estimate(existing.value_text or repr(existing.value), unit_for(found))
