"""Two people editing one study's heading: the form sends the version and fields it was loaded
with, a save writes only what the person changed, and the later save of the same field gets 409
with both values, who and when, and "keep mine" / "take theirs"."""

import html
import re

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session

from app.db.models import Study
from tests.factories import make_study
from tests.helpers import OTHER_AUTHOR, TEST_AUTHOR, reloaded, text_of

_INPUT = re.compile(r'<input\b[^>]*\bname="([^"]+)"[^>]*\bvalue="([^"]*)"')


def heading_form(http: TestClient, study: Study) -> dict[str, str]:
    """The edit form as the page holds it: typed fields, version, originals, values seen."""
    return form_fields(http.get(f"/studies/{study.id}/edit").text)


def form_fields(page: str) -> dict[str, str]:
    start = page.index('<section class="panel study-form">')
    form = page[start:page.index("</form>", start)]
    fields = {name: html.unescape(value) for name, value in _INPUT.findall(form)
              if name != "csrf_token"}
    scope = re.search(r'<textarea id="study-scope"[^>]*>([^<]*)</textarea>', form)
    return {**fields, "scope": html.unescape(scope[1]) if scope else ""}


@pytest.mark.parametrize("first_is_ben", [False, True])
def test_the_second_save_of_one_heading_field_gets_409_and_other_fields_merge(
    client: TestClient, ben: TestClient, session: Session, first_is_ben: bool,
) -> None:
    study = make_study(session, facility="Tank farm A (invented)")
    first, second = (ben, client) if first_is_ben else (client, ben)
    first_name = OTHER_AUTHOR if first_is_ben else TEST_AUTHOR
    first_form, second_form = heading_form(first, study), heading_form(second, study)
    url = f"/studies/{study.id}/edit"

    done = first.post(url, data={**first_form, "facility": "Tank farm B (invented)"},
                      follow_redirects=False)
    clash = second.post(url, data={**second_form, "facility": "Jetty 2 (invented)"})
    merged = second.post(url, data={**second_form, "scope": "Nodes 1 to 4 (invented)"},
                         follow_redirects=False)

    assert done.status_code == 303 and merged.status_code == 303
    assert clash.status_code == 409
    box = text_of(clash.text, "study-conflict")
    assert f"Facility was changed by {first_name}" in box
    assert "Theirs: Tank farm B (invented) · yours: Jetty 2 (invented)" in box
    row = reloaded(session, Study, study.id)
    assert (row.facility, row.scope) == ("Tank farm B (invented)", "Nodes 1 to 4 (invented)")


def test_keep_mine_after_a_heading_conflict_saves_over_theirs(
    client: TestClient, ben: TestClient, session: Session,
) -> None:
    study = make_study(session)
    ada_form, ben_form = heading_form(client, study), heading_form(ben, study)
    url = f"/studies/{study.id}/edit"
    client.post(url, data={**ada_form, "revision_label": "Rev B"})
    clash = ben.post(url, data={**ben_form, "revision_label": "Rev C"})
    resend = form_fields(clash.text)
    assert (resend["version"], resend["seen_revision_label"]) == (ben_form["version"], "Rev B")

    kept = ben.post(url, data={**resend, "resolution": "keep"}, follow_redirects=False)

    assert kept.status_code == 303
    assert reloaded(session, Study, study.id).revision_label == "Rev C"
