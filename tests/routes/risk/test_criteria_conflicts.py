"""Two people editing one severity category: a whole-form save never puts back a target the
other person changed, and a save of the same field gets 409 with both values and the choice."""

import html
import re
from collections.abc import Iterator

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import ChangeLogEntry, SeverityCategory
from app.main import create_app
from tests.factories import first_category, make_study
from tests.helpers import TEST_AUTHOR
from tests.security.sessions import install_local_session

OTHER_AUTHOR = "Ben Other (invented)"
_INPUT = re.compile(r"<input\b[^>]*>")
_ATTR = re.compile(r'\b(name|value)="([^"]*)"')


@pytest.fixture
def ben(session: Session) -> Iterator[TestClient]:
    with TestClient(create_app(), client=("127.0.0.1", 50001)) as other:
        install_local_session(other, OTHER_AUTHOR)
        yield other


@pytest.fixture
def category(session: Session) -> SeverityCategory:
    """The study's one category, target 1e-2 per year (invented)."""
    row = first_category(session, make_study(session))
    row.tolerable_frequency = 1e-2
    session.add(row)
    session.commit()
    session.refresh(row)
    return row


def loaded_form(http: TestClient, category: SeverityCategory) -> dict[str, str]:
    """The category's form as the page holds it: typed fields, version and originals."""
    page = http.get(f"/studies/{category.study_id}/criteria").text
    start = page.index(f'id="category-{category.id}"')
    form = page[start:page.index("</form>", start)]
    fields = {}
    for tag in _INPUT.findall(form):
        attrs = dict(_ATTR.findall(tag))
        if attrs.get("name", "csrf_token") != "csrf_token":
            fields[attrs["name"]] = html.unescape(attrs.get("value", ""))
    description = re.search(r"<textarea[^>]*>([^<]*)</textarea>", form)
    fields["description"] = html.unescape(description.group(1)) if description else ""
    fields["receptor"] = fields.get("orig_receptor", "people")
    return fields


def save(http: TestClient, category: SeverityCategory, form: dict[str, str]) -> str:
    reply = http.post(f"/studies/{category.study_id}/criteria/categories/{category.id}",
                      data=form)
    return f"{reply.status_code} {reply.text}"


def stored(session: Session, category: SeverityCategory) -> SeverityCategory:
    session.expire_all()
    row = session.get(SeverityCategory, category.id)
    assert row is not None
    return row


def test_a_whole_form_save_keeps_the_target_the_other_person_changed(
    client: TestClient, ben: TestClient, session: Session, category: SeverityCategory,
) -> None:
    """Issue 10's measured case: the target went back from 1e-6 to 1e-2 with no word."""
    ada_form, ben_form = loaded_form(client, category), loaded_form(ben, category)
    assert save(client, category, {**ada_form, "tolerable_frequency": "1e-6"}).startswith("200")

    reply = save(ben, category, {**ben_form, "description": "Lost-time injury (invented)"})

    assert reply.startswith("200")
    row = stored(session, category)
    assert (row.tolerable_frequency, row.description) == (1e-6, "Lost-time injury (invented)")


def test_the_same_field_saved_twice_gets_409_then_keep_mine_or_take_theirs(
    client: TestClient, ben: TestClient, session: Session, category: SeverityCategory,
) -> None:
    ada_form, ben_form = loaded_form(client, category), loaded_form(ben, category)
    save(client, category, {**ada_form, "tolerable_frequency": "1e-6"})

    reply = save(ben, category, {**ben_form, "tolerable_frequency": "1e-4"})

    assert reply.startswith("409")
    text = " ".join(html.unescape(re.sub(r"<[^>]+>", " ", reply)).split())
    assert f"Tolerable frequency was changed by {TEST_AUTHOR}" in text
    assert "Theirs: 1e-06 · yours: 0.0001" in text
    assert "Keep mine" in text and "Take theirs" in text
    assert stored(session, category).tolerable_frequency == 1e-6
    again = {**ben_form, "tolerable_frequency": "1e-4", "seen_tolerable_frequency": "1e-06"}

    assert save(ben, category, {**again, "resolution": "take"}).startswith("200")
    assert stored(session, category).tolerable_frequency == 1e-6
    assert save(ben, category, {**again, "resolution": "keep"}).startswith("200")
    assert stored(session, category).tolerable_frequency == 1e-4
    choices = session.exec(select(ChangeLogEntry).where(ChangeLogEntry.action == "conflict")
                           .order_by(ChangeLogEntry.id)).all()  # type: ignore[arg-type]
    assert [(c.author, c.old_value, c.new_value, c.summary.split(": ")[-1]) for c in choices] == [
        (OTHER_AUTHOR, "1e-06", "1e-06", "took the other person's value after a conflict"),
        (OTHER_AUTHOR, "1e-06", "0.0001", "kept their own value after a conflict")]
