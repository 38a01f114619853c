"""Importing a study file from the study list: a good file makes a study, a bad one nothing."""

import html
import json
import re
from datetime import UTC, datetime

import httpx
import pytest
from fastapi.testclient import TestClient
from sqlalchemy.exc import IntegrityError
from sqlmodel import Session

import app.routes.exchange.exports as export_routes
from app.db.models import Study
from app.services.exchange import study_import
from app.services.exchange.study_file import export_study
from app.services.exchange.study_file_revisions import expand_revision_parts
from tests.samples import edit_demo_study, make_hostile_study, study_count


def upload(client: TestClient, content: bytes, name: str = "study.json") -> httpx.Response:
    """POST the file as the study list's form does, without following the redirect."""
    files = {"study_file": (name, content, "application/json")}
    return client.post("/studies/import", files=files, follow_redirects=False)


def field_error(page: str) -> str:
    """The text of the import form's error message."""
    found = re.search(r'<p class="field-error" id="study-file-error" role="alert">(.*?)</p>',
                      page, re.S)
    assert found, "no error message on the import form"
    return html.unescape(found.group(1))


def test_the_study_list_offers_an_upload_form(client: TestClient, session: Session) -> None:
    page = client.get("/").text
    assert 'action="http://testserver/studies/import" enctype="multipart/form-data"' in page
    assert 'name="study_file" type="file" accept=".json,application/json"' in page
    assert "tallyroom import FILE" in page


def test_a_good_file_becomes_a_new_study_whose_export_is_the_same_file(
    client: TestClient, session: Session, demo_study: Study
) -> None:
    edit_demo_study(session, demo_study)
    first = client.get(f"/studies/{demo_study.id}/export.json").content

    response = upload(client, first)

    assert response.status_code == 303
    new_id = int(response.headers["location"].rsplit("/", 1)[1])
    assert new_id != demo_study.id and study_count(session) == 2
    # Same content; the title says it is the imported copy (two studies never share a title).
    # Revisions compared as their snapshots: the copy's new title is no longer the header
    # part its revision shares, so its file carries that part itself (issue 14).
    today = datetime.now(UTC).date().isoformat()
    again = expand_revision_parts(json.loads(client.get(f"/studies/{new_id}/export.json").content))
    assert again["study"].pop("title") == f"{demo_study.title} (imported {today})"
    original = expand_revision_parts(json.loads(first))
    original["study"].pop("title")
    assert again == original


def small_file(session: Session) -> dict:  # type: ignore[type-arg]
    """A valid study file to spoil."""
    return export_study(session, make_hostile_study(session, long_text="ok").id or 0)


REFUSED = [
    (lambda data: b"", "Not imported: the file is empty"),
    (lambda data: b"{\"format\": ", "Not imported: not a JSON file"),
    (lambda data: json.dumps({**data, "format": "other"}).encode(),
     "Not imported: not a Tallyroom study file"),
    (lambda data: json.dumps({**data, "schema_version": 3}).encode(),
     "Not imported: schema_version 3 is not supported"),
    (lambda data: json.dumps({**data, "severity_categories": []}).encode(),
     "Not imported: severity_categories: List should have at least 1 item"),
    (lambda data: json.dumps({**data, "participants": [{"ref": "P1", "name": ""}]}).encode(),
     "Not imported: participants.0.name: String should have at least 1 character"),
]  # fmt: skip


@pytest.mark.parametrize(("spoiled", "message"), REFUSED)
def test_a_bad_file_is_refused_with_its_reason_and_nothing_is_written(
    client: TestClient, session: Session, spoiled: object, message: str
) -> None:
    raw = spoiled(small_file(session))  # type: ignore[operator]
    before = study_count(session)
    response = upload(client, raw)
    assert response.status_code == 422
    assert field_error(response.text).startswith(message)
    assert 'id="study-list"' in response.text
    assert study_count(session) == before


def test_a_post_without_a_file_is_refused(client: TestClient, session: Session) -> None:
    response = client.post("/studies/import", data={"other": "x"}, follow_redirects=False)
    assert response.status_code == 422
    assert field_error(response.text).startswith("Not imported: the file is empty")


def test_an_oversized_file_is_refused_before_it_is_parsed(
    client: TestClient, session: Session, monkeypatch: pytest.MonkeyPatch
) -> None:
    raw = json.dumps(small_file(session)).encode()
    monkeypatch.setattr(export_routes, "MAX_FILE_BYTES", 100)
    monkeypatch.setattr(study_import, "MAX_FILE_BYTES", 100)
    before = study_count(session)
    response = upload(client, raw)
    assert response.status_code == 422
    assert field_error(response.text) == (
        "Not imported: the file is larger than 100 bytes, the most a study file may be"
    )
    assert study_count(session) == before


def test_a_failure_late_in_the_import_is_refused_and_leaves_no_study(
    client: TestClient, session: Session, demo_study: Study, monkeypatch: pytest.MonkeyPatch
) -> None:
    raw = client.get(f"/studies/{demo_study.id}/export.json").content

    def failing_history(*_args: object) -> None:
        raise IntegrityError("INSERT", {}, Exception("simulated constraint failure"))

    monkeypatch.setattr(study_import, "_import_history", failing_history)
    response = upload(client, raw)
    assert response.status_code == 422
    assert field_error(response.text) == (
        "Not imported: the database refused the file, so nothing was imported: "
        "simulated constraint failure"
    )
    assert study_count(session) == 1
