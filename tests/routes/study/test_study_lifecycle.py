"""A study's life in the browser without JavaScript: new, edit, duplicate, delete, and the
empty states that say what to do next."""

from fastapi.testclient import TestClient
from sqlmodel import Session, func, select

from app.db.models import Node, Scenario, SeverityCategory, Study
from tests.factories import make_category, make_scenario_tree, make_study
from tests.helpers import text_of


def _new(client: TestClient, **fields: str) -> tuple[int, str]:
    form = {"title": "Loading bay", "facility": "Invented site", "scope": "Tanker unloading",
            "revision_label": "A", "criteria_from": "", **fields}
    response = client.post("/studies", data=form, follow_redirects=False)
    return response.status_code, response.headers.get("location", response.text)


def test_the_study_list_offers_a_new_study(client: TestClient, session: Session) -> None:
    page = client.get("/").text
    assert 'href="/studies/new"' in page
    assert "No studies yet. Start one with" in text_of(page, "no-studies")
    assert client.get("/studies/new").status_code == 200


def test_a_new_study_opens_on_an_empty_worksheet_that_adds_the_first_node(
    client: TestClient, session: Session
) -> None:
    status, location = _new(client)
    assert status == 303
    study = session.exec(select(Study).where(Study.title == "Loading bay")).one()
    assert location == f"/studies/{study.id}/worksheet"
    assert (study.facility, study.scope, study.revision_label) == (
        "Invented site", "Tanker unloading", "A")
    page = client.get(location)
    assert page.status_code == 200
    assert "This study has no nodes yet" in page.text
    added = client.post(f"/studies/{study.id}/nodes", data={"name": "Unloading arm"},
                        follow_redirects=False)
    node = session.exec(select(Node).where(Node.study_id == study.id)).one()
    assert added.headers["location"].startswith(f"/studies/{study.id}/nodes/{node.id}")
    assert client.get(location, follow_redirects=False).headers["location"] == (
        f"/studies/{study.id}/nodes/{node.id}")


def test_a_new_study_starts_with_empty_criteria_or_a_copy_of_another_studys(
    client: TestClient, session: Session
) -> None:
    source = make_study(session, title="Source (invented)")
    make_category(session, source, name="Major injury", tolerable_frequency=1e-4)
    _new(client, title="Empty one")
    _new(client, title="Copied one", criteria_from=str(source.id))
    by_title = {s.title: s.id for s in session.exec(select(Study)).all()}

    def names(study_id: int | None) -> list[tuple[str, float]]:
        rows = session.exec(select(SeverityCategory).where(
            SeverityCategory.study_id == study_id).order_by(
                SeverityCategory.position, SeverityCategory.id)).all()
        return [(r.name, r.tolerable_frequency) for r in rows]

    assert names(by_title["Empty one"]) == []
    assert names(by_title["Copied one"]) == [("Single fatality", 1e-5), ("Major injury", 1e-4)]
    assert names(source.id) == names(by_title["Copied one"])  # the source keeps its own


def test_a_study_without_title_is_refused_and_nothing_is_saved(
    client: TestClient, session: Session
) -> None:
    status, body = _new(client, title="  ", revision_label="")
    assert status == 422
    assert "a study needs a title." in body and "give a revision label" in body
    assert 'value="Invented site"' in body  # what was typed is kept
    assert session.exec(select(func.count()).select_from(Study)).one() == 0
    status, body = _new(client, criteria_from="999")
    assert status == 422 and "choose empty criteria or a study from the list." in body


def test_the_heading_fields_can_be_edited_later(client: TestClient, session: Session) -> None:
    study = make_study(session)
    form = client.get(f"/studies/{study.id}/edit").text
    assert 'value="Test study (invented)"' in form
    response = client.post(f"/studies/{study.id}/edit", follow_redirects=False, data={
        "title": "Renamed", "facility": "North", "scope": "All of it", "revision_label": "B"})
    assert response.headers["location"] == f"/studies/{study.id}"
    session.refresh(study)
    assert (study.title, study.facility, study.scope, study.revision_label) == (
        "Renamed", "North", "All of it", "B")
    refused = client.post(f"/studies/{study.id}/edit", data={"title": "", "revision_label": "B"})
    assert refused.status_code == 422
    session.refresh(study)
    assert study.title == "Renamed"


def test_delete_asks_first_naming_what_goes(client: TestClient, session: Session) -> None:
    study_id = make_scenario_tree(session).study_id
    question = client.get(f"/studies/{study_id}/delete").text
    contents = text_of(question, "study-delete-contents")
    assert "1 node, 1 scenario, 1 step, 1 severity category" in contents
    assert "This cannot be undone." in question
    assert session.get(Study, study_id) is not None  # asking deletes nothing
    response = client.post(f"/studies/{study_id}/delete", follow_redirects=False)
    assert response.headers["location"] == "/"
    session.expunge_all()
    assert session.get(Study, study_id) is None
    for model in (Node, Scenario, SeverityCategory):
        assert session.exec(select(func.count()).select_from(model)).one() == 0


def test_duplicate_copies_the_whole_study_under_a_dated_title(
    client: TestClient, session: Session
) -> None:
    scenario = make_scenario_tree(session, title="Tank farm")
    response = client.post(f"/studies/{scenario.study_id}/duplicate", follow_redirects=False)
    copy = session.exec(select(Study).where(Study.id != scenario.study_id)).one()
    assert response.headers["location"] == f"/studies/{copy.id}"
    assert copy.title.startswith("Tank farm (copy 20")
    assert session.exec(select(func.count()).select_from(Scenario)).one() == 2


def test_an_empty_study_says_what_to_do_next_everywhere(
    client: TestClient, session: Session
) -> None:
    _new(client)
    study_id = session.exec(select(Study.id)).one()
    overview = client.get(f"/studies/{study_id}").text
    assert f'href="/studies/{study_id}/worksheet"' in text_of(overview, "no-nodes") or (
        f'/studies/{study_id}/worksheet' in overview)
    assert "add the severity categories" in text_of(overview, "no-nodes")
    criteria = client.get(f"/studies/{study_id}/criteria").text
    assert "No severity categories yet." in text_of(criteria, "no-categories")
    people = client.get(f"/studies/{study_id}/attendance").text
    assert "No participants yet: add each member" in text_of(people, "no-participants")
    client.post(f"/studies/{study_id}/nodes", data={"name": "Arm"})
    node_id = session.exec(select(Node.id)).one()
    worksheet = client.get(f"/studies/{study_id}/nodes/{node_id}").text
    assert "No deviations on this node yet." in text_of(worksheet, "no-deviations")


def test_the_worksheet_is_a_study_tab(client: TestClient, session: Session) -> None:
    scenario = make_scenario_tree(session)
    node_id = session.exec(select(Node.id)).one()
    overview = client.get(f"/studies/{scenario.study_id}").text
    assert f'href="/studies/{scenario.study_id}/worksheet">Worksheet</a>' in overview
    worksheet = client.get(f"/studies/{scenario.study_id}/nodes/{node_id}").text
    assert (f'href="/studies/{scenario.study_id}/worksheet" aria-current="page">Worksheet'
            in worksheet)


def test_an_import_whose_title_exists_gets_a_dated_title(
    client: TestClient, session: Session
) -> None:
    import json
    from datetime import UTC, datetime

    from app.services.exchange.study_file import export_study

    scenario = make_scenario_tree(session, title="Tank farm")
    raw = json.dumps(export_study(session, scenario.study_id)).encode()
    for _ in range(2):
        client.post("/studies/import", files={"study_file": ("s.json", raw, "application/json")})
    today = datetime.now(UTC).date().isoformat()
    titles = sorted(session.exec(select(Study.title)).all())
    assert titles == ["Tank farm", f"Tank farm (imported {today})",
                      f"Tank farm (imported {today}) 2"]


def test_criteria_categories_redirect_after_adding_and_refuse_a_repeated_name(
    client: TestClient, session: Session
) -> None:
    study = make_study(session)  # has "Single fatality"
    form = {"name": "Major injury", "tolerable_frequency": "1e-4", "receptor": "people",
            "description": ""}
    added = client.post(f"/studies/{study.id}/criteria/categories", data=form,
                        follow_redirects=False)
    assert added.status_code == 303
    page = client.get(added.headers["location"]).text
    assert "'Major injury' added." in text_of(page, "criteria-message")
    again = client.post(f"/studies/{study.id}/criteria/categories",
                        data={**form, "name": " major INJURY "})
    assert again.status_code == 422
    assert "already has a category called &#39;Major injury&#39;" in again.text
    names = session.exec(select(SeverityCategory.name).where(
        SeverityCategory.study_id == study.id)).all()
    assert sorted(names) == ["Major injury", "Single fatality"]
