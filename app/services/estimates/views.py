"""What each page may see of a round. Values exist in a view only once the round is revealed:
an open round's view carries who answered, never what, so no page or fragment can leak them."""

from dataclasses import dataclass
from typing import Any

from sqlmodel import Session, col, select

from app.db.models import Deviation, EstimateRound, RoundEstimate, RoundState, Scenario, Step
from app.likelihood.estimates import RoundStats
from app.likelihood.numbers import ParsedNumber
from app.services.estimates.answers import SCRIBE, Answerer, own_estimate
from app.services.estimates.reading import unit_words
from app.services.estimates.rounds import dissents_of, estimates_of, get_round, stats_of
from app.services.estimates.spread_layout import mark_label, place_labels
from app.services.study.tree import WorksheetSpot, get_study

# Any in this module: a round's query conditions are SQLAlchemy expressions (the ORM boundary).

@dataclass(frozen=True)
class Mark:
    """One revealed estimate on the log axis: who (None when names are hidden), value, place."""

    person: str | None
    value: float
    text: str
    position: float
    lane: int  # the line its label is on (spread_layout.place_labels)
    by_scribe: bool
    label: str = ""
    label_x: float = 0.0


@dataclass(frozen=True)
class RoundView:
    """A round as a page shows it; `stats`, `marks` and `dissents` stay empty while open."""

    round: EstimateRound
    step_label: str
    unit_words: str
    answered: tuple[tuple[str, bool], ...]  # (person, typed by the scribe), in answer order
    stats: RoundStats | None
    marks: tuple[Mark, ...]
    dissents: tuple[tuple[str, str], ...]

    @property
    def is_open(self) -> bool:
        """True while answers are still hidden."""
        return self.round.state == RoundState.OPEN


def _marks(found: EstimateRound, estimates: list[RoundEstimate],
           stats: RoundStats) -> tuple[Mark, ...]:
    people = [e.person if found.names_shown else None for e in estimates]
    labels = [mark_label(person, e.entered_by == SCRIBE, e.value)
              for person, e in zip(people, estimates, strict=True)]
    places = place_labels(labels, stats.positions)
    return tuple(
        Mark(person=person, value=e.value, text=e.value_text, position=position, lane=lane,
             by_scribe=e.entered_by == SCRIBE, label=label, label_x=label_x)
        for person, e, position, label, (label_x, lane)
        in zip(people, estimates, stats.positions, labels, places, strict=True))


def round_view(session: Session, found: EstimateRound) -> RoundView:
    """The round as every page may see it (values only after the reveal)."""
    estimates = estimates_of(session, found.id or 0)
    step = session.get(Step, found.step_id) if found.step_id is not None else None
    label = (step.description or step.kind.label) if step else f"word “{found.word}”"
    answered = tuple((e.person, e.entered_by == SCRIBE) for e in estimates)
    if found.state == RoundState.OPEN:
        return RoundView(found, label, unit_words(found.unit), answered, None, (), ())
    stats = stats_of(found, estimates)
    marks = _marks(found, estimates, stats) if stats else ()
    dissents = tuple((d.person, d.reason) for d in dissents_of(session, found.id or 0))
    return RoundView(found, label, unit_words(found.unit), answered, stats, marks, dissents)


@dataclass(frozen=True)
class RoundPage:
    """The facilitator's page: this round, the step's other rounds, where the step sits."""

    current: RoundView
    others: tuple[RoundView, ...]
    spot: WorksheetSpot | None  # None for a round on a word


def _spot(session: Session, study_id: int, step_id: int) -> WorksheetSpot:
    step = session.get(Step, step_id)
    scenario = session.get(Scenario, step.scenario_id) if step else None
    deviation = session.get(Deviation, scenario.deviation_id) if scenario else None
    node_id = deviation.node_id if deviation else 0
    return WorksheetSpot(study_id, node_id, scenario.id if scenario else None)


def _same_question(found: EstimateRound) -> list[Any]:
    if found.step_id is not None:
        return [EstimateRound.step_id == found.step_id]
    return [EstimateRound.study_id == found.study_id, EstimateRound.word == found.word,
            EstimateRound.unit == found.unit]


def round_page(*, session: Session, study_id: int, round_id: int) -> RoundPage:
    """The round with the other rounds on its step (or word), newest first."""
    found = get_round(session, study_id, round_id)
    rounds = session.exec(select(EstimateRound).where(*_same_question(found))
                          .order_by(col(EstimateRound.number).desc())).all()
    others = tuple(round_view(session, r) for r in rounds if r.id != found.id)
    spot = _spot(session, study_id, found.step_id) if found.step_id is not None else None
    return RoundPage(round_view(session, found), others, spot)


def study_rounds(*, session: Session, study_id: int) -> tuple[RoundView, ...]:
    """Every round of the study, newest first."""
    get_study(session, study_id)
    rounds = session.exec(select(EstimateRound).where(EstimateRound.study_id == study_id)
                          .order_by(col(EstimateRound.id).desc())).all()
    return tuple(round_view(session, r) for r in rounds)


def _latest(session: Session, study_id: int, *states: RoundState) -> EstimateRound | None:
    """The newest round in one of the states that the team has not moved on from."""
    candidates = session.exec(select(EstimateRound)
                              .where(EstimateRound.study_id == study_id,
                                     col(EstimateRound.state).in_(list(states)))
                              .order_by(col(EstimateRound.updated_at).desc(),
                                        col(EstimateRound.id).desc())).all()
    return next((r for r in candidates if not _superseded(session, r)), None)


def _superseded(session: Session, found: EstimateRound) -> bool:
    """A later round asks the same question: a revealed round 1 stays a record, and once
    round 2 is agreed the room view no longer shows round 1 as the round in hand."""
    return session.exec(select(EstimateRound.id).where(
        *_same_question(found), EstimateRound.number > found.number)).first() is not None


def room_rounds(*, session: Session, study_id: int) -> tuple[RoundView, ...]:
    """What the room view shows: the latest step round not yet agreed, or, when the latest is
    a word round, every word round not yet adopted (each word's spread)."""
    found = _latest(session, study_id, RoundState.OPEN, RoundState.REVEALED)
    if found is None:
        return ()
    if found.step_id is not None:
        return (round_view(session, found),)
    return word_rounds(session=session, study_id=study_id)


def word_rounds(*, session: Session, study_id: int) -> tuple[RoundView, ...]:
    """Every word round not yet adopted, in the list's order (unit, then word order)."""
    found = session.exec(select(EstimateRound)
                         .where(EstimateRound.study_id == study_id,
                                col(EstimateRound.step_id).is_(None),
                                EstimateRound.state != RoundState.AGREED)
                         .order_by(col(EstimateRound.unit), col(EstimateRound.id))).all()
    return tuple(round_view(session, r) for r in found)


@dataclass(frozen=True)
class ParticipantRound:
    """A participant's page: the open round's question and unit and their own answer only."""

    round_id: int
    number: int
    question: str
    unit_words: str
    own: ParsedNumber | None


def participant_rounds(*, session: Session, study_id: int,
                       answerer: Answerer) -> tuple[ParticipantRound, ...]:
    """Every open round (a step's, or one per word), with this device's own estimates only."""
    get_study(session, study_id)
    found = session.exec(select(EstimateRound)
                         .where(EstimateRound.study_id == study_id,
                                EstimateRound.state == RoundState.OPEN)
                         .order_by(col(EstimateRound.id))).all()
    return tuple(ParticipantRound(r.id or 0, r.number, r.question, unit_words(r.unit),
                                  own_estimate(session, r.id or 0, answerer)) for r in found)


def open_rounds_key(found: tuple[ParticipantRound, ...]) -> str:
    """Which rounds are open ('3-4-5'): the participant page reloads when this changes."""
    return "-".join(str(item.round_id) for item in found) or "0"
