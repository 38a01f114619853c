"""Create a study from a validated study file, all in one transaction."""

import json
from datetime import UTC, date, datetime
from functools import cache
from typing import Any

from sqlalchemy import insert
from sqlalchemy.exc import SQLAlchemyError
from sqlmodel import Session, SQLModel, select

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
    saved_id,
)
from app.db.queries import fetch_plain_rows, placed_rows_of_study
from app.db.session import busy_clause, is_busy
from app.db.snapshot_store import store_snapshot
from app.db.tracking import SUPPRESS_LOG_KEY
from app.services.exchange.study_file import StudyFileError, export_study, parse_study_file
from app.services.exchange.study_file_rounds import import_rounds
from app.services.exchange.study_schema import StudyFile
from app.services.study.bulk_results import helper_started, no_cycle_collection
from app.services.study.step_fields import receptors_text
from app.services.study.stored_results import write_study_results
from app.settings import get_settings

# The import limit follows from the largest study the app holds: max_import_scenarios
# (50,000) scenarios of the invented bench shape (about 10 deviations a node, 20 scenarios a
# deviation, 4-6 steps each), with one frozen revision whose every node differs from the live
# study. Measured on those studies' JSON exports: about 3.2 kB a scenario of study content and
# 1.7 kB of computed figures (at most 5.0 kB in all, 3.3 kB of content); a revision stored as
# shared parts adds only what differs, at most one more copy of the content. So 50,000 x
# (5.0 + 3.3) kB = 415 MB, and the limit (Settings.max_import_bytes, 512 MB) leaves more than
# a fifth for longer texts. Larger
# uploads are refused before they are read as JSON.
FILE_BYTES_PER_SCENARIO = 5_000
CONTENT_BYTES_PER_SCENARIO = 3_300
LARGEST_STUDY_FILE_BYTES = 50_000 * (FILE_BYTES_PER_SCENARIO + CONTENT_BYTES_PER_SCENARIO)
TITLE_LIMIT = 200  # Study.title's column limit


def max_file_bytes() -> int:
    """The most bytes a study file may have (settings)."""
    return get_settings().max_import_bytes


def import_study_upload(*, session: Session, raw: bytes) -> Study:
    """Import an uploaded study file, refusing an empty or oversized one with a clear message."""
    if not raw.strip():
        raise StudyFileError("the file is empty: choose a Tallyroom study file (.json)")
    check_file_size(len(raw))
    return import_study_text(session, raw)


def check_file_size(size: int) -> None:
    """Refuse a file over the size limit (before it is read, where the size is known)."""
    limit = max_file_bytes()
    if size > limit:
        raise StudyFileError(
            f"the file is larger than {_size(limit)}, the most a study file may be"
        )


def _size(count: int) -> str:
    return f"{count / 2**20:g} MB" if count >= 2**20 else f"{count:,} bytes"


def import_study_text(session: Session, raw: str | bytes) -> Study:
    """Validate and import a JSON study file; nothing is written when it is invalid."""
    # A study large enough to share its computation gets its helper process started now,
    # so the process starts while the file is read and written (at most one scenario per
    # CONTENT_BYTES_PER_SCENARIO of file).
    with no_cycle_collection(), helper_started(len(raw) // CONTENT_BYTES_PER_SCENARIO):
        return import_study_file(session, parse_study_file(raw))


def import_study_file(session: Session, data: StudyFile) -> Study:
    """Write a whole study from a validated file and commit once; on any failure write nothing."""
    session.info[SUPPRESS_LOG_KEY] = True
    try:
        header = data.study.model_dump()
        header["title"] = distinct_title(session, header["title"], "imported")
        study = Study(**header, invented=data.invented)
        session.add(study)
        session.flush()
        assert study.id is not None
        categories = _import_categories(session, study.id, data)
        scenarios = _import_nodes(session, study.id, data, categories)
        _import_actions(session, study.id, data, scenarios)
        _import_attendance(session, study.id, data)
        import_rounds(session, study.id, data, scenarios)
        _import_history(session, study.id, data, scenarios)
        # The rows went in by Core statements, which the stored-results notes do not see:
        # every scenario is computed here, so the first page reads them ready.
        write_study_results(session, study.id)
        session.commit()
    except SQLAlchemyError as err:
        session.rollback()
        if is_busy(err):
            raise StudyFileError(busy_clause("nothing was imported")) from err
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


def distinct_title(session: Session, title: str, verb: str, today: date | None = None) -> str:
    """The title, or "title (imported 2026-12-02)" when a study already has it (then " 2", …).

    Two studies with one title would be told apart only by their ids; the date says which
    copy came in when.
    """
    taken = set(session.exec(select(Study.title)).all())
    if title not in taken:
        return title
    stamp = f" ({verb} {(today or datetime.now(UTC).date()).isoformat()})"
    room = TITLE_LIMIT - len(stamp) - 4  # leave room for " 99" as well
    base = title[:room] + stamp
    candidates = (base if n == 1 else f"{base} {n}" for n in range(1, len(taken) + 2))
    return next(c for c in candidates if c not in taken)


def duplicate_study(*, session: Session, study_id: int) -> Study:
    """A copy of the whole study (criteria, nodes, actions, people; not its history)."""
    data = parse_study_file(json.dumps(export_study(session, study_id, with_history=False)))
    source_title = data.study.title
    copy = data.model_copy(update={"study": data.study.model_copy(
        update={"title": distinct_title(session, source_title, "copy")})})
    return import_study_file(session, copy)


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


# (parent id, position among its siblings, the file's row)
Placed = tuple[int, int, Any]


def _import_nodes(
    session: Session, study_id: int, data: StudyFile, categories: dict[str, int]
) -> dict[str, int]:
    """Write the worksheet a level at a time, each level one Core executemany of plain rows.

    The validated nodes are turned into plain dicts in one call, and no ORM object is built:
    building tens of thousands of model objects (and the ORM's bulk path, which still looks at
    every row) was most of the time a 10,000-scenario import took.
    """
    nodes = [node.model_dump() for node in data.nodes]
    study = {"study_id": study_id}
    node_ids = _insert_placed(session, Node, "node", "study_id", [
        {**study, "position": position, **_without(row, "deviations")}
        for position, row in enumerate(nodes)])
    deviations = _placed(node_ids, nodes, "deviations")
    deviation_ids = _insert_placed(session, Deviation, "deviation", "node_id", [
        {**study, "node_id": node_id, "position": position, **_without(row, "scenarios")}
        for node_id, position, row in deviations])
    scenarios = _placed(deviation_ids, [row for _, _, row in deviations], "scenarios")
    scenario_ids = _insert_placed(session, Scenario, "scenario", "deviation_id", [
        _scenario_values(study_id, placed, categories) for placed in scenarios])
    scenario_rows = [row for _, _, row in scenarios]
    _insert_all(session, Step, [_step_values(study_id, placed)
                                for placed in _placed(scenario_ids, scenario_rows, "steps")])
    _insert_all(session, Safeguard, [
        {**study, "scenario_id": scenario_id, "position": position, **row}
        for scenario_id, position, row in _placed(scenario_ids, scenario_rows, "safeguards")])
    return {row["ref"]: scenario_id
            for row, scenario_id in zip(scenario_rows, scenario_ids, strict=True)}


def _without(row: dict[str, Any], children: str) -> dict[str, Any]:
    return {key: value for key, value in row.items() if key != children}


def _placed(parent_ids: list[int], parent_rows: list[dict[str, Any]], children: str
            ) -> list[Placed]:
    """Each child row of each parent with its parent's new id and its position."""
    return [(parent_id, position, row)
            for parent_id, parent_row in zip(parent_ids, parent_rows, strict=True)
            for position, row in enumerate(parent_row[children])]


def _scenario_values(study_id: int, placed: Placed, categories: dict[str, int]
                     ) -> dict[str, Any]:
    deviation_id, position, row = placed
    return {
        "study_id": study_id, "deviation_id": deviation_id, "position": position,
        "cause": row["cause"], "consequence": row["consequence"], "notes": row["notes"],
        "severity_category_id": categories.get(row["severity"] or ""),
        "environment_category_id": categories.get(row["environment_severity"] or ""),
        "asset_category_id": categories.get(row["asset_severity"] or ""),
        "people_not_rated": row["people_not_rated"],
    }


def _step_values(study_id: int, placed: Placed) -> dict[str, Any]:
    scenario_id, position, step = placed
    # Key order as the calculator writes it, so exporting again gives the same file (its
    # enumerations are StrEnums, written as their text).
    proof_test = (json.dumps(step["proof_test"], ensure_ascii=False)
                  if step["proof_test"] else None)
    return {**step, "study_id": study_id, "scenario_id": scenario_id, "position": position,
            "proof_test": proof_test, "receptors": receptors_text(step["receptors"])}


def _column_defaults(model: type[SQLModel]) -> dict[str, Any]:
    """The model's field defaults (a Core insert builds no objects, so it fills them), each
    factory called now: a timestamp is this import's, not the first one's in the process."""
    return {name: field.get_default(call_default_factory=True)
            for name, field in _defaulted_fields(model)}


@cache
def _defaulted_fields(model: type[SQLModel]) -> tuple[tuple[str, Any], ...]:
    return tuple((name, field) for name, field in model.model_fields.items()
                 if name != "id" and not field.is_required())


def _insert_placed(session: Session, model: type[SQLModel], what: str, parent_field: str,
                   rows: list[dict[str, Any]]) -> list[int]:
    """Insert rows in bulk and return their new ids in the rows' order.

    (parent, position) is unique within a freshly imported study, so the ids are read back by
    it in one query: SQLite cannot return ids of a multi-row insert in a guaranteed order.
    """
    if not rows:
        return []
    _insert_all(session, model, rows)
    study_id = rows[0]["study_id"]
    placed = fetch_plain_rows(session, placed_rows_of_study(model, parent_field, study_id))
    new_ids = {(row[1], row[2]): row[0] for row in map(tuple, placed)}  # (id, parent id, position)
    if len(new_ids) != len(rows):
        raise StudyFileError(f"the study's {what} rows were not all written; nothing imported")
    return [new_ids[(row[parent_field], row["position"])] for row in rows]


def _insert_all(session: Session, model: type[SQLModel], rows: list[dict[str, Any]]) -> None:
    """Insert rows with one executemany (every row sends the same columns)."""
    if not rows:
        return
    table: Any = model
    defaults = _column_defaults(model)
    connection = session.connection()
    if connection.dialect.name != "sqlite":  # PostgreSQL: Core batches them into few statements
        connection.execute(insert(table.__table__), [{**defaults, **row} for row in rows])
        return
    statement, keys, processors = _driver_insert(model, connection.dialect,
                                                 tuple({**defaults, **rows[0]}))
    # A column no row gives takes the same default in every row: converted once.
    fixed = {key: value if process is None else process(value)
             for key, process in zip(keys, processors, strict=True)
             if key not in rows[0] for value in (defaults[key],)}
    given = [(key, process) for key, process in zip(keys, processors, strict=True)
             if key not in fixed]
    connection.exec_driver_sql(statement, [_driver_row(row, keys, fixed, given) for row in rows])


def _driver_row(row: dict[str, Any], keys: tuple[str, ...], fixed: dict[str, Any],
                given: list[tuple[str, Any]]) -> tuple[Any, ...]:
    """One row's parameters in the statement's column order, each converted as Core would."""
    values = {key: row[key] if process is None else process(row[key]) for key, process in given}
    return tuple(fixed[key] if key in fixed else values[key] for key in keys)


@cache
def _driver_insert(model: type[SQLModel], dialect: Any, keys: tuple[str, ...]
                   ) -> tuple[str, tuple[str, ...], tuple[Any, ...]]:
    """The INSERT as the driver runs it (qmark), its columns in order and each column's
    conversion: what Core would do per row, done once per table (Core built and checked each
    row's parameters, most of the time the rows took to write on SQLite)."""
    table: Any = model
    compiled: Any = insert(table.__table__).compile(dialect=dialect, column_keys=list(keys))
    order = tuple(compiled.positiontup)
    return (str(compiled), order,
            tuple(table.__table__.c[key].type.dialect_impl(dialect).bind_processor(dialect)
                  for key in order))


def _flush_all(session: Session, rows: list[Any]) -> None:
    session.add_all(rows)
    session.flush()


def _import_actions(
    session: Session, study_id: int, data: StudyFile, scenarios: dict[str, int]
) -> None:
    actions = [Recommendation(study_id=study_id, position=position,
                              **row.model_dump(exclude={"scenarios"}))
               for position, row in enumerate(data.recommendations)]
    _flush_all(session, actions)
    session.add_all(RecommendationScenario(recommendation_id=saved_id(action.id),
                                           scenario_id=scenarios[ref])
                    for action, row in zip(actions, data.recommendations, strict=True)
                    for ref in row.scenarios)


def _import_attendance(session: Session, study_id: int, data: StudyFile) -> None:
    people = {p.ref: Participant(study_id=study_id, **p.model_dump(exclude={"ref"}))
              for p in data.participants}
    _flush_all(session, list(people.values()))
    days = [SessionDay(study_id=study_id, day=row.day, note=row.note)
            for row in data.session_days]
    _flush_all(session, days)
    session.add_all(Attendance(session_day_id=saved_id(day.id),
                               participant_id=saved_id(people[ref].id))
                    for day, row in zip(days, data.session_days, strict=True)
                    for ref in row.attendees)


def _import_history(
    session: Session, study_id: int, data: StudyFile, scenarios: dict[str, int]
) -> None:
    for entry in data.change_log:
        session.add(ChangeLogEntry(
            study_id=study_id, scenario_id=scenarios.get(entry.scenario or ""),
            **entry.model_dump(exclude={"scenario"}),
        ))
    for revision in data.revisions:
        if revision.snapshot is None:  # parse_study_file puts every snapshot together
            raise StudyFileError(f"revision '{revision.label}' has no snapshot")
        # A snapshot without cautions (every one frozen in the app) is stored without them.
        # Likewise the optional keys of issue 13, so an older snapshot is kept as it was.
        unset = {key for key in ("cautions", "estimate_rounds", "word_scale")
                 if key not in revision.snapshot.model_fields_set}
        manifest = store_snapshot(session, study_id,
                                  revision.snapshot.model_dump(mode="json", exclude=unset))
        session.add(Revision(study_id=study_id, snapshot_parts=manifest, **revision.model_dump(
            exclude={"snapshot", "snapshot_from_parts"})))
