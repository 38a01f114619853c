"""Two people in two real browsers editing one participant: the later save of the same field
shows both values in the row being edited, and "take theirs" settles it."""

from pathlib import Path

from playwright.sync_api import Page, expect
from sqlmodel import Session

from app.db.models import Participant
from tests.factories import make_study


def test_two_people_editing_one_participant(
    ada: Page, ben: Page, live_server: str, session: Session, artifacts: Path,
) -> None:
    study = make_study(session)
    person = Participant(study_id=study.id, name="Dana Field (invented)", role="Operator")
    session.add(person)
    session.commit()
    session.refresh(person)
    for page in (ada, ben):
        page.goto(f"{live_server}/studies/{study.id}/attendance")
        page.locator(f"#participant-{person.id}").get_by_role("link", name="Edit").click()
        expect(page.locator("#edit-person-role")).to_have_value("Operator")

    ada.locator("#edit-person-role").fill("Shift lead")
    ada.get_by_role("button", name="Save", exact=True).click()
    expect(ada.locator(f"#participant-{person.id}")).to_contain_text("Shift lead")
    ben.locator("#edit-person-role").fill("Panel operator")
    ben.locator("#edit-person-company").fill("Plantco (invented)")
    ben.get_by_role("button", name="Save", exact=True).click()

    box = ben.locator("#edit-person-conflict[data-conflict]")
    expect(box).to_contain_text("Role was changed by Ada Scribe (invented)")
    expect(box.locator(".conflict-theirs")).to_have_text("Shift lead")
    expect(box.locator(".conflict-mine")).to_have_text("Panel operator")
    ben.screenshot(path=str(artifacts / "attendance-conflict.png"), full_page=True)

    box.get_by_role("button", name="Take theirs").click()
    row = ben.locator(f"#participant-{person.id}")
    expect(row).to_contain_text("Shift lead")
    expect(row).to_contain_text("Plantco (invented)")  # Ben's other change, saved
