"""The JSON study file: export -> import -> export gives the same file; bad files write nothing."""

import json

import pytest
from sqlalchemy import Engine
from sqlalchemy.exc import IntegrityError
from sqlmodel import Session

from app.db.models import ChangeLogEntry, Step, Study
from app.db.queries import fetch_rows_of_study
from app.services.exchange import study_import
from app.services.exchange.exports import ExportFormat, export_filename, study_json_bytes
from app.services.exchange.study_file import StudyFileError, export_study, parse_study_file
from app.services.exchange.study_import import import_study_text, import_study_upload
from app.services.exchange.study_schema import StudyFile, study_json_schema
from tests.helpers import another_writer, waiting_less_for_writers
from tests.samples import (
    FORMULA_TEXTS,
    MARKUP,
    SCRIPTS,
    edit_demo_study,
    free_the_title,
    make_hostile_study,
    study_count,
)


def exported(session: Session, study: Study) -> bytes:
    """The study's JSON export, as the download and the command line write it."""
    assert study.id is not None
    return study_json_bytes(export_study(session, study.id))


def test_an_edited_demo_study_with_a_revision_survives_export_import_export(
    session: Session, demo_study: Study
) -> None:
    edit_demo_study(session, demo_study)
    first = exported(session, demo_study)
    data = json.loads(first)
    assert {e["action"] for e in data["change_log"]} >= {"create", "edit", "delete"}
    assert any(e["field"] == "cause" and e["scenario"] == "S1" for e in data["change_log"])
    assert [r["label"] for r in data["revisions"]] == ["Rev 1"]
    free_the_title(session, demo_study)

    copy = import_study_text(session, first)

    assert copy.id != demo_study.id
    assert exported(session, copy) == first


def test_the_import_itself_writes_no_change_log_entries(
    session: Session, demo_study: Study
) -> None:
    edit_demo_study(session, demo_study)
    logged = len(fetch_rows_of_study(session, ChangeLogEntry, demo_study.id))
    copy = import_study_text(session, exported(session, demo_study))
    assert len(fetch_rows_of_study(session, ChangeLogEntry, copy.id)) == logged


def test_hostile_text_is_exact_in_the_file_and_survives_a_round_trip(session: Session) -> None:
    # Within the model's length limits, so the file is importable again.
    study = make_hostile_study(session, long_text="x" * 2000)
    first = exported(session, study)
    data = json.loads(first)
    scenarios = data["nodes"][0]["deviations"][0]["scenarios"]
    assert data["study"]["title"] == f"Hostile {MARKUP} {SCRIPTS['arabic']}"
    assert [s["cause"] for s in scenarios][:2] == [FORMULA_TEXTS[0], FORMULA_TEXTS[2]]
    assert scenarios[0]["consequence"] == MARKUP
    assert SCRIPTS["emoji"] in first.decode("utf-8")  # as itself, not \\u escapes
    free_the_title(session, study)
    assert exported(session, import_study_text(session, first)) == first


def test_the_served_schema_document_describes_the_file(session: Session) -> None:
    schema = study_json_schema()
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert schema["$id"] == "/schema/study-v2.json"
    assert schema["properties"]["schema_version"]["const"] == 2
    assert set(schema["required"]) == {"study", "severity_categories"}
    assert schema["$defs"]["ScenarioRow"]["properties"]["cause"]["maxLength"] == 2000
    assert schema == StudyFile.model_json_schema() | {k: schema[k] for k in ("$schema", "$id")}


def valid_file(session: Session) -> dict:  # type: ignore[type-arg]
    """A small valid study file to spoil, one rule at a time."""
    return export_study(session, make_hostile_study(session, long_text="ok").id or 0)


def spoil(data: dict, path: str, value: object) -> bytes:  # type: ignore[type-arg]
    """The file with the value at a dotted path (list indexes as numbers) replaced."""
    *parents, last = path.split(".")
    target = data
    for part in parents:
        target = target[int(part)] if part.isdigit() else target[part]
    target[int(last) if last.isdigit() else last] = value
    return json.dumps(data).encode()


SCENARIO = "nodes.0.deviations.0.scenarios.0"

REFUSALS = [
    ("format", "not-a-study", "not a Tallyroom study file"),
    ("schema_version", 3, "schema_version 3 is not supported"),
    ("study.title", "", "study.title: String should have at least 1 character"),
    (f"{SCENARIO}.steps.1.value", 1.5, "a probability must be at most 1"),
    (f"{SCENARIO}.steps.0.kind", "ipl", "a scenario needs exactly one initiating event"),
    (f"{SCENARIO}.severity", "C99", "severity category ref 'C99' is not defined"),
    (f"{SCENARIO}.cause", "x" * 2001, "cause: String should have at most 2000 characters"),
    (f"{SCENARIO}.colour", "red", "colour: Extra inputs are not permitted"),
    ("severity_categories.0.tolerable_frequency", 0, "greater than 0"),
    ("recommendations", [{"text": "Do it", "scenarios": ["S1", "S1"]}],
     "scenario ref 'S1' is listed twice"),
]  # fmt: skip


@pytest.mark.parametrize(("path", "value", "message"), REFUSALS)
def test_a_file_breaking_a_rule_is_refused_by_name_and_writes_nothing(
    session: Session, path: str, value: object, message: str
) -> None:
    raw = spoil(valid_file(session), path, value)
    before = study_count(session)
    with pytest.raises(StudyFileError, match=message.replace("(", r"\(").replace(")", r"\)")):
        import_study_text(session, raw)
    assert study_count(session) == before


@pytest.mark.parametrize(("raw", "message"), [
    (b"", "the file is empty"),
    (b"   \n", "the file is empty"),
    (b"{not json", "not a JSON file"),
    (b"\xff\xfe\x00", "not a JSON file"),
    (b"[1, 2]", "not a Tallyroom study file"),
])  # fmt: skip
def test_an_unreadable_upload_is_refused(session: Session, raw: bytes, message: str) -> None:
    with pytest.raises(StudyFileError, match=message):
        import_study_upload(session=session, raw=raw)
    assert study_count(session) == 0


def test_a_database_failure_late_in_the_import_leaves_no_trace(
    session: Session, demo_study: Study, monkeypatch: pytest.MonkeyPatch
) -> None:
    edit_demo_study(session, demo_study)
    raw = exported(session, demo_study)
    steps_before = len(session.exec(Step.__table__.select()).all())  # type: ignore[attr-defined]
    real_history = study_import._import_history

    def history_then_failure(*args: object) -> None:
        real_history(*args)  # type: ignore[arg-type]
        session.flush()  # every row of the new study is now written inside the transaction
        raise IntegrityError("INSERT", {}, Exception("simulated constraint failure"))

    monkeypatch.setattr(study_import, "_import_history", history_then_failure)
    with pytest.raises(StudyFileError, match="the database refused the file, so nothing was "
                                             "imported: simulated constraint failure"):
        import_study_text(session, raw)
    assert study_count(session) == 1
    assert len(session.exec(Step.__table__.select()).all()) == steps_before  # type: ignore[attr-defined]


def test_the_demo_file_itself_parses(session: Session) -> None:
    from app.demo import DEMO_STUDY_PATH

    parsed = parse_study_file(DEMO_STUDY_PATH.read_bytes())
    assert parsed.invented is True
    assert len(parsed.severity_categories) >= 3


@pytest.mark.parametrize(("title", "name"), [
    ("Unit 40 solvent recovery", "tallyroom-7-unit-40-solvent-recovery.json"),
    ("Café «Ünïcode» / ../../etc", "tallyroom-7-cafe-unicode-etc.json"),
    ("储罐液位过高", "tallyroom-7.json"),
    ("x" * 200, f"tallyroom-7-{'x' * 60}.json"),
])  # fmt: skip
def test_download_file_names_are_short_safe_ascii(title: str, name: str) -> None:
    assert export_filename(Study(id=7, title=title), ExportFormat.JSON) == name


def test_an_import_while_another_write_holds_the_database_says_busy_and_writes_nothing(
    session: Session, db_engine: Engine, demo_study: Study, monkeypatch: pytest.MonkeyPatch,
) -> None:
    """SQLite takes one writer at a time: an import that waited its turn past the wait says so
    (busy, try again) rather than "the database refused the file"."""
    raw = exported(session, demo_study)
    for impatient in waiting_less_for_writers(db_engine, monkeypatch, 0.2):
        with Session(impatient) as own, another_writer(db_engine), pytest.raises(
                StudyFileError, match="the database is busy writing another large change"):
            import_study_text(own, raw)
    assert study_count(session) == 1
