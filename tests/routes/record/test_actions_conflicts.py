"""Two people editing one action: a whole-form save keeps the other person's fields; a save of
the same field gets 409 with both values, and "keep mine" settles it (logged)."""

import html
import re

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import ChangeLogEntry, Recommendation
from app.services.record.actions import add_action
from tests.factories import make_study
from tests.helpers import OTHER_AUTHOR, TEST_AUTHOR


@pytest.fixture
def action(session: Session) -> Recommendation:
    study = make_study(session)
    return add_action(session=session, study_id=study.id or 0, text="Add a high level trip",
                      owner="Ops (invented)")


def loaded(http: TestClient, action: Recommendation) -> dict[str, str]:
    """The edit form's hidden version and originals, and its fields as loaded."""
    page = http.get(f"/studies/{action.study_id}/actions/{action.id}/edit").text
    hidden = dict(re.findall(r'<input type="hidden" name="((?:orig_\w+)|version)" value="([^"]*)"',
                             page))
    fields = {k.removeprefix("orig_"): html.unescape(v) for k, v in hidden.items()}
    return {**{k: html.unescape(v) for k, v in hidden.items()}, **fields}


def save(http: TestClient, action: Recommendation, form: dict[str, str]) -> int:
    return http.post(f"/studies/{action.study_id}/actions/{action.id}", data=form,
                     follow_redirects=False).status_code


def stored(session: Session, action: Recommendation) -> Recommendation:
    session.expire_all()
    row = session.get(Recommendation, action.id)
    assert row is not None
    return row


def test_a_whole_form_save_keeps_the_field_the_other_person_changed(
    client: TestClient, ben: TestClient, session: Session, action: Recommendation,
) -> None:
    ada_form, ben_form = loaded(client, action), loaded(ben, action)
    assert ada_form["version"] and ada_form["orig_owner"] == "Ops (invented)"
    assert save(client, action, {**ada_form, "owner": "Instrument team (invented)"}) == 303

    assert save(ben, action, {**ben_form, "status": "in_progress"}) == 303

    row = stored(session, action)
    assert (row.owner, str(row.status)) == ("Instrument team (invented)", "in_progress")


def test_the_same_field_gets_409_and_keep_mine_saves_it_logged(
    client: TestClient, ben: TestClient, session: Session, action: Recommendation,
) -> None:
    ada_form, ben_form = loaded(client, action), loaded(ben, action)
    save(client, action, {**ada_form, "owner": "Instrument team (invented)"})

    reply = ben.post(f"/studies/{action.study_id}/actions/{action.id}",
                     data={**ben_form, "owner": "Maintenance (invented)"})

    assert reply.status_code == 409
    text = " ".join(html.unescape(re.sub(r"<[^>]+>", " ", reply.text)).split())
    assert (f"Owner was changed by {TEST_AUTHOR}" in text and
            "Theirs: Instrument team (invented) · yours: Maintenance (invented)" in text)
    assert stored(session, action).owner == "Instrument team (invented)"

    assert save(ben, action, {**ben_form, "owner": "Maintenance (invented)",
                              "seen_owner": "Instrument team (invented)",
                              "resolution": "keep"}) == 303
    assert stored(session, action).owner == "Maintenance (invented)"
    entry = session.exec(select(ChangeLogEntry).where(ChangeLogEntry.action == "conflict")).one()
    assert (entry.author, entry.old_value, entry.new_value) == (
        OTHER_AUTHOR, "Instrument team (invented)", "Maintenance (invented)")
