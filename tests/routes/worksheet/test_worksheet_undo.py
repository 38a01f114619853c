"""Undo is per person: Alt+Z brings back the asker's own newest delete, in its old place; a
delete that cannot come back says what is missing and never blocks anyone's other undos."""


import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session, col, select

from app.db.models import Deviation, Scenario, SeverityCategory, Step, Study
from app.db.tracking import AUTHOR_KEY
from app.likelihood.types import StepKind
from tests.factories import make_category, make_scenario, make_scenario_tree, make_step
from tests.helpers import HX, OTHER_AUTHOR, TEST_AUTHOR, text_of


@pytest.fixture
def scenario(session: Session) -> Scenario:
    return make_scenario_tree(session)


def ipls(session: Session, scenario: Scenario) -> list[tuple[str, int]]:
    session.expire_all()
    found = session.exec(select(Step).where(Step.scenario_id == scenario.id,
                                            Step.kind == StepKind.IPL)
                         .order_by(col(Step.position), col(Step.id))).all()
    return [(s.description, s.position) for s in found]


def delete(http: TestClient, row: Step | Scenario, kind: str) -> None:
    reply = http.post(f"/studies/{row.study_id}/{kind}s/{row.id}/delete", headers=HX)
    assert reply.status_code == 200, reply.text


def test_each_person_undoes_their_own_newest_delete(
    client: TestClient, ben: TestClient, session: Session, scenario: Scenario,
) -> None:
    ada_step = make_step(session, scenario, description="Ada's trip", position=0)
    ben_step = make_step(session, scenario, description="Ben's alarm", position=1)
    delete(client, ada_step, "step")
    delete(ben, ben_step, "step")  # the newest delete in the study is Ben's

    page = client.get(f"/studies/{scenario.study_id}/worksheet", follow_redirects=True).text
    assert "Your last delete: step 'Ada's trip'" in text_of(page, "undo-bar")
    assert f"Deletes others can undo in their own browser: {OTHER_AUTHOR} (1)" in \
        text_of(page, "undo-bar")

    assert client.post(f"/studies/{scenario.study_id}/undo", headers=HX).status_code == 200
    assert ipls(session, scenario) == [("Ada's trip", 0)]
    nothing = client.post(f"/studies/{scenario.study_id}/undo", headers=HX)
    assert nothing.status_code == 409
    assert text_of(nothing.text, "worksheet-notice") == "You have no delete to undo."
    assert ben.post(f"/studies/{scenario.study_id}/undo", headers=HX).status_code == 200
    assert ipls(session, scenario) == [("Ada's trip", 0), ("Ben's alarm", 1)]


def test_a_restored_row_goes_back_to_its_place_and_positions_are_renumbered(
    client: TestClient, session: Session, scenario: Scenario,
) -> None:
    for position, name in enumerate(["Alarm", "Trip", "Relief valve"]):
        make_step(session, scenario, description=name, position=position)
    middle = session.exec(select(Step).where(Step.description == "Trip")).one()
    delete(client, middle, "step")
    assert ipls(session, scenario) == [("Alarm", 0), ("Relief valve", 2)]

    client.post(f"/studies/{scenario.study_id}/undo", headers=HX)

    assert ipls(session, scenario) == [("Alarm", 0), ("Trip", 1), ("Relief valve", 2)]


def test_a_scenario_whose_category_went_since_is_refused_by_name_and_set_aside(
    client: TestClient, ben: TestClient, session: Session, scenario: Scenario,
) -> None:
    """Restoring a scenario rated against a deleted category used to fail for good and block
    every later undo; now it names the category and the next undo goes on."""
    study = session.get(Study, scenario.study_id)
    assert study is not None
    minor = make_category(session, study, name="Minor injury (invented)",
                          tolerable_frequency=1e-3)
    older = make_step(session, scenario, description="Older trip", position=0)
    parent = session.get(Deviation, scenario.deviation_id)
    assert parent is not None
    doomed = make_scenario(session, parent, cause="Valve sticks (invented)",
                           severity_category_id=minor.id)
    ben_step = make_step(session, scenario, description="Ben's alarm", position=1)
    delete(client, older, "step")
    delete(client, doomed, "scenario")
    delete(ben, ben_step, "step")
    session.info[AUTHOR_KEY] = TEST_AUTHOR
    session.delete(session.get(SeverityCategory, minor.id))
    session.commit()

    refused = client.post(f"/studies/{scenario.study_id}/undo", headers=HX)

    assert refused.status_code == 409
    notice = text_of(refused.text, "worksheet-notice")
    assert "The scenario 'Valve sticks (invented)' cannot come back" in notice
    assert "severity category 'Minor injury (invented)' was deleted since by Test Scribe" in notice
    assert "Set aside:" in text_of(refused.text, "undo-bar")
    # Neither Ada's older delete nor Ben's is blocked.
    assert client.post(f"/studies/{scenario.study_id}/undo", headers=HX).status_code == 200
    assert ben.post(f"/studies/{scenario.study_id}/undo", headers=HX).status_code == 200
    assert ipls(session, scenario) == [("Older trip", 0), ("Ben's alarm", 1)]
    assert session.exec(select(Scenario).where(Scenario.cause == "Valve sticks (invented)")
                        ).first() is None
