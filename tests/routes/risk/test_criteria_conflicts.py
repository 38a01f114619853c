"""Two people editing one severity category: a whole-form save never puts back a target the
other person changed, and a save of the same field gets 409 with both values and the choice."""

import html
import re

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, select

from app.db.models import ChangeLogEntry, SeverityCategory, Study
from tests.factories import first_category, make_study
from tests.helpers import OTHER_AUTHOR, TEST_AUTHOR, text_of

_INPUT = re.compile(r"<input\b[^>]*>")
_ATTR = re.compile(r'\b(name|value)="([^"]*)"')




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


def basis_form(http: TestClient, study_id: int) -> dict[str, str]:
    """The basis form as the page holds it: the text, the study's version and the original."""
    page = http.get(f"/studies/{study_id}/criteria").text
    form = page[page.index('id="basis-editor"'):]
    form = form[:form.index("</form>")]
    fields = {attrs["name"]: html.unescape(attrs.get("value", ""))
              for attrs in (dict(_ATTR.findall(tag)) for tag in _INPUT.findall(form))
              if attrs.get("name") not in (None, "csrf_token")}
    typed = re.search(r"<textarea[^>]*>([^<]*)</textarea>", form)
    return {**fields, "criteria_basis": html.unescape(typed.group(1)) if typed else ""}


@pytest.mark.parametrize("first_is_ben", [False, True])
def test_the_second_basis_save_gets_409_with_both_texts(
    client: TestClient, ben: TestClient, session: Session, category: SeverityCategory,
    first_is_ben: bool,
) -> None:
    first, second = (ben, client) if first_is_ben else (client, ben)
    first_name = OTHER_AUTHOR if first_is_ben else TEST_AUTHOR
    url = f"/studies/{category.study_id}/criteria/basis"
    first_form, second_form = (basis_form(h, category.study_id) for h in (first, second))

    saved = first.post(url, data={**first_form,
                                  "criteria_basis": "Site standard RS-1 (invented)"})
    reply = second.post(url, data={**second_form,
                                   "criteria_basis": "Group standard G-7 (invented)"})

    assert saved.status_code == 200 and reply.status_code == 409
    box = text_of(reply.text, "criteria_basis-conflict")
    assert f"Criteria basis was changed by {first_name}" in box
    assert "Theirs: Site standard RS-1 (invented) · yours: Group standard G-7 (invented)" in box
    session.expire_all()
    assert session.get(Study, category.study_id).criteria_basis == (  # type: ignore[union-attr]
        "Site standard RS-1 (invented)")
    again = {**second_form,
             "criteria_basis": "Group standard G-7 (invented)",
             "seen_criteria_basis": "Site standard RS-1 (invented)", "resolution": "keep"}
    assert second.post(url, data=again).status_code == 200
    session.expire_all()
    assert session.get(Study, category.study_id).criteria_basis == (  # type: ignore[union-attr]
        "Group standard G-7 (invented)")


def test_a_basis_save_is_not_stopped_by_a_change_elsewhere_in_the_study(
    client: TestClient, ben: TestClient, session: Session, category: SeverityCategory,
) -> None:
    """The study row's version also moves with heading edits; only the basis itself clashes."""
    ben_form = basis_form(ben, category.study_id)
    study = session.get(Study, category.study_id)
    assert study is not None
    study.facility = "Tank farm B (invented)"
    session.add(study)
    session.commit()

    reply = ben.post(f"/studies/{category.study_id}/criteria/basis",
                     data={**ben_form, "criteria_basis": "Site standard RS-2 (invented)"})

    assert reply.status_code == 200
    session.expire_all()
    stored_study = session.get(Study, category.study_id)
    assert stored_study is not None
    assert (stored_study.criteria_basis, stored_study.facility) == (
        "Site standard RS-2 (invented)", "Tank farm B (invented)")
