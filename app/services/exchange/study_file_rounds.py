"""Estimate rounds and the team word scale in the study file: written out and read back.

A round's step is named by its scenario's file ref and its place among the scenario's steps
(1 = first), since the file has no database ids. An open round is written without its
estimates (and the device ids of estimates are never written): what nobody has seen yet stays
off every file, revision snapshot and report.
"""

from collections import defaultdict
from datetime import UTC, datetime
from typing import Any

from sqlmodel import Session, col, select

from app.db.models import (
    EstimateRound,
    RoundDissent,
    RoundEstimate,
    RoundState,
    ScaleWord,
    Step,
    saved_id,
)
from app.db.queries import fetch_plain_rows, placed_rows_of_study
from app.services.exchange.study_schema import StudyFile

# Any in this module: study-file rows are JSON objects (the file boundary).

StepPlace = tuple[str, int]  # (scenario ref, 1-based place among its steps)


def _step_places(session: Session, study_id: int,
                 scenario_refs: dict[int, str]) -> dict[int, StepPlace]:
    """Step id -> (scenario ref, place), places counted in worksheet order."""
    rows = sorted((tuple(row) for row in fetch_plain_rows(
        session, placed_rows_of_study(Step, "scenario_id", study_id))),
        key=lambda row: (row[1], row[2], row[0]))
    places: dict[int, StepPlace] = {}
    counts: dict[int, int] = defaultdict(int)
    for step_id, scenario_id, _position in rows:
        counts[scenario_id] += 1
        if scenario_id in scenario_refs:
            places[step_id] = (scenario_refs[scenario_id], counts[scenario_id])
    return places


def _grouped(rows: list[Any]) -> dict[int, list[Any]]:
    grouped: dict[int, list[Any]] = defaultdict(list)
    for row in rows:
        grouped[row.round_id].append(row)
    return grouped


def export_rounds(session: Session, study_id: int,
                  scenario_refs: dict[int, str]) -> list[dict[str, Any]]:
    """Every round of the study in the file's form, steps' rounds in worksheet order first."""
    rounds = list(session.exec(select(EstimateRound).where(EstimateRound.study_id == study_id)
                               .order_by(col(EstimateRound.id))))
    if not rounds:
        return []
    places = _step_places(session, study_id, scenario_refs)
    estimates = _grouped(list(session.exec(
        select(RoundEstimate).where(RoundEstimate.study_id == study_id)
        .order_by(col(RoundEstimate.id)))))
    dissents = _grouped(list(session.exec(
        select(RoundDissent).where(RoundDissent.study_id == study_id)
        .order_by(col(RoundDissent.position), col(RoundDissent.id)))))
    order = {ref: index for index, ref in enumerate(scenario_refs.values())}

    def sort_key(found: EstimateRound) -> tuple[int, int, str, str, int]:
        ref, place = places.get(found.step_id or 0, ("", 0))
        return (order.get(ref, len(order)), place, found.unit, found.word or "", found.number)

    return [_round_row(found, places.get(found.step_id or 0), estimates[saved_id(found.id)],
                       dissents[saved_id(found.id)])
            for found in sorted(rounds, key=sort_key)
            if found.step_id is None or found.step_id in places]


def _round_row(found: EstimateRound, place: StepPlace | None,
               estimates: list[RoundEstimate], dissents: list[RoundDissent]) -> dict[str, Any]:
    shown = found.state != RoundState.OPEN
    return {
        "scenario": place[0] if place else None, "step": place[1] if place else None,
        "word": found.word if place is None else None, "number": found.number,
        "question": found.question, "unit": found.unit, "state": str(found.state),
        "names_shown": found.names_shown, "opened_by": found.opened_by,
        "opened_at": utc_text(found.created_at), "agreed_method": found.agreed_method,
        "agreed_value": found.agreed_value, "agreed_basis": found.agreed_basis,
        "estimates": [{"person": e.person, "value": e.value, "value_text": e.value_text,
                       "entered_by": e.entered_by} for e in estimates] if shown else [],
        "dissents": [{"person": d.person, "reason": d.reason} for d in dissents],
    }


def utc_text(moment: datetime) -> str:
    """A moment as the validated file writes it back ('…T08:40:00Z'), so a revision snapshot
    re-imported and exported again is the same text."""
    aware = moment if moment.tzinfo else moment.replace(tzinfo=UTC)
    return aware.astimezone(UTC).isoformat().replace("+00:00", "Z")


def export_word_scale(session: Session, study_id: int) -> list[dict[str, Any]]:
    """The team's words, each unit's list in its order, with the adopted numbers."""
    words = session.exec(select(ScaleWord).where(ScaleWord.study_id == study_id)
                         .order_by(col(ScaleWord.unit), col(ScaleWord.position),
                                   col(ScaleWord.id))).all()
    return [{"unit": w.unit, "word": w.word, "value": w.value} for w in words]


def import_rounds(session: Session, study_id: int, data: StudyFile,
                  scenarios: dict[str, int]) -> None:
    """Write the file's rounds (with their estimates and dissents) and word scale."""
    session.add_all(ScaleWord(study_id=study_id, unit=row.unit.value, word=row.word,
                              value=row.value, position=position)
                    for position, row in enumerate(data.word_scale))
    if not data.estimate_rounds:
        return
    steps = {(row[1], row[2]): row[0] for row in map(tuple, fetch_plain_rows(
        session, placed_rows_of_study(Step, "scenario_id", study_id)))}
    for row in data.estimate_rounds:
        step_id = (steps[(scenarios[row.scenario], row.step - 1)]
                   if row.scenario is not None and row.step is not None else None)
        found = EstimateRound(
            study_id=study_id, step_id=step_id, **row.model_dump(
                exclude={"scenario", "step", "opened_at", "estimates", "dissents"}))
        if row.opened_at is not None:  # a time without a zone is read as UTC
            opened = row.opened_at
            found.created_at = found.updated_at = (
                opened if opened.tzinfo else opened.replace(tzinfo=UTC))
        session.add(found)
        session.flush()
        session.add_all(RoundEstimate(study_id=study_id, round_id=saved_id(found.id),
                                      **estimate.model_dump())
                        for estimate in row.estimates)
        session.add_all(RoundDissent(study_id=study_id, round_id=saved_id(found.id),
                                     position=position, **dissent.model_dump())
                        for position, dissent in enumerate(row.dissents))
