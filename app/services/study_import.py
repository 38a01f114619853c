"""Create a study from a validated study file, all in one transaction."""

import json

from sqlalchemy.exc import SQLAlchemyError
from sqlmodel import Session

from app.db.models import (
    Attendance,
    ChangeLogEntry,
    Deviation,
    Node,
    Participant,
    Recommendation,
    RecommendationScenario,
    Revision,
    Safeguard,
    Scenario,
    SessionDay,
    SeverityCategory,
    Step,
    Study,
)
from app.db.tracking import SUPPRESS_LOG_KEY
from app.services.study_io import StudyFileError, parse_study_file
from app.services.study_schema import ScenarioRow, StudyFile

# Far above any real study (the invented demo is under 100 kB); refuses runaway uploads early.
MAX_FILE_BYTES = 20 * 1024 * 1024


def import_study_upload(*, session: Session, raw: bytes) -> Study:
    """Import an uploaded study file, refusing an empty or oversized one with a clear message."""
    if not raw.strip():
        raise StudyFileError("the file is empty: choose a Tallyroom study file (.json)")
    if len(raw) > MAX_FILE_BYTES:
        raise StudyFileError(
            f"the file is larger than {_size(MAX_FILE_BYTES)}, the most a study file may be"
        )
    return import_study_text(session, raw)


def _size(count: int) -> str:
    return f"{count / 2**20:g} MB" if count >= 2**20 else f"{count:,} bytes"


def import_study_text(session: Session, raw: str | bytes) -> Study:
    """Validate and import a JSON study file; nothing is written when it is invalid."""
    return import_study(session, parse_study_file(raw))


def import_study(session: Session, data: StudyFile) -> Study:
    """Write a whole study from a validated file and commit once; on any failure write nothing."""
    session.info[SUPPRESS_LOG_KEY] = True
    try:
        study = Study(**data.study.model_dump(), invented=data.invented)
        session.add(study)
        session.flush()
        assert study.id is not None
        categories = _import_categories(session, study.id, data)
        scenarios = _import_nodes(session, study.id, data, categories)
        _import_actions(session, study.id, data, scenarios)
        _import_attendance(session, study.id, data)
        _import_history(session, study.id, data, scenarios)
        session.commit()
    except SQLAlchemyError as err:
        session.rollback()
        raise StudyFileError(
            f"the database refused the file, so nothing was imported: {_first_line(err)}"
        ) from err
    except Exception:
        session.rollback()
        raise
    finally:
        session.info.pop(SUPPRESS_LOG_KEY, None)
    session.refresh(study)
    return study


def _first_line(err: SQLAlchemyError) -> str:
    return str(getattr(err, "orig", None) or err).splitlines()[0]


def _import_categories(session: Session, study_id: int, data: StudyFile) -> dict[str, int]:
    rows = {
        c.ref: SeverityCategory(study_id=study_id, position=i, **c.model_dump(exclude={"ref"}))
        for i, c in enumerate(data.severity_categories)
    }
    session.add_all(rows.values())
    session.flush()
    return {ref: row.id for ref, row in rows.items() if row.id is not None}


def _import_nodes(
    session: Session, study_id: int, data: StudyFile, categories: dict[str, int]
) -> dict[str, int]:
    scenario_ids: dict[str, int] = {}
    for node_position, node_row in enumerate(data.nodes):
        node = Node(study_id=study_id, position=node_position,
                    **node_row.model_dump(exclude={"deviations"}))
        session.add(node)
        session.flush()
        for deviation_position, deviation_row in enumerate(node_row.deviations):
            deviation = Deviation(study_id=study_id, node_id=node.id, position=deviation_position,
                                  **deviation_row.model_dump(exclude={"scenarios"}))
            session.add(deviation)
            session.flush()
            for position, scenario_row in enumerate(deviation_row.scenarios):
                scenario = _import_scenario(session, study_id, deviation.id, position,
                                            scenario_row, categories)
                scenario_ids[scenario_row.ref] = scenario
    return scenario_ids


def _import_scenario(
    session: Session, study_id: int, deviation_id: int | None, position: int,
    row: ScenarioRow, categories: dict[str, int],
) -> int:
    scenario = Scenario(
        study_id=study_id, deviation_id=deviation_id, position=position,
        cause=row.cause, consequence=row.consequence, notes=row.notes,
        severity_category_id=categories[row.severity],
        environment_category_id=categories.get(row.environment_severity or ""),
        asset_category_id=categories.get(row.asset_severity or ""),
    )
    session.add(scenario)
    session.flush()
    assert scenario.id is not None
    for step_position, step in enumerate(row.steps):
        values = step.model_dump(exclude={"proof_test"})
        # Key order kept as given, so exporting again gives the same file.
        proof_test = json.dumps(step.proof_test) if step.proof_test else None
        session.add(Step(study_id=study_id, scenario_id=scenario.id, position=step_position,
                         proof_test=proof_test, **values))
    for safeguard_position, safeguard in enumerate(row.safeguards):
        session.add(Safeguard(study_id=study_id, scenario_id=scenario.id,
                              position=safeguard_position, **safeguard.model_dump()))
    return scenario.id


def _import_actions(
    session: Session, study_id: int, data: StudyFile, scenarios: dict[str, int]
) -> None:
    for position, row in enumerate(data.recommendations):
        action = Recommendation(study_id=study_id, position=position,
                                **row.model_dump(exclude={"scenarios"}))
        session.add(action)
        session.flush()
        for ref in row.scenarios:
            session.add(RecommendationScenario(recommendation_id=action.id,
                                               scenario_id=scenarios[ref]))


def _import_attendance(session: Session, study_id: int, data: StudyFile) -> None:
    people = {p.ref: Participant(study_id=study_id, **p.model_dump(exclude={"ref"}))
              for p in data.participants}
    session.add_all(people.values())
    session.flush()
    for row in data.session_days:
        day = SessionDay(study_id=study_id, day=row.day, note=row.note)
        session.add(day)
        session.flush()
        for ref in row.attendees:
            session.add(Attendance(session_day_id=day.id, participant_id=people[ref].id))


def _import_history(
    session: Session, study_id: int, data: StudyFile, scenarios: dict[str, int]
) -> None:
    for entry in data.change_log:
        session.add(ChangeLogEntry(
            study_id=study_id, scenario_id=scenarios.get(entry.scenario or ""),
            **entry.model_dump(exclude={"scenario"}),
        ))
    for revision in data.revisions:
        session.add(Revision(study_id=study_id, snapshot=json.dumps(revision.snapshot),
                             **revision.model_dump(exclude={"snapshot"})))
