"""Two people in two real browsers on one step's details form: a change to another field is
kept, a change to the same field shows the conflict at that field with both values, and
"keep mine" settles it (logged)."""

from pathlib import Path

import pytest
from playwright.sync_api import Page, expect
from sqlmodel import Session, select

from app.db.models import ChangeLogEntry, Step
from tests.factories import make_scenario_tree, make_step
from tests.helpers import reloaded


@pytest.fixture
def step(session: Session) -> Step:
    return make_step(session, make_scenario_tree(session), value=0.1, description="Level alarm",
                     ipl_type="operator_response", basis="Alarm LAH-1 (invented)")


def test_two_people_on_one_details_form(
    ada: Page, ben: Page, live_server: str, session: Session, step: Step, artifacts: Path,
) -> None:
    for page in (ada, ben):
        page.goto(f"{live_server}/studies/{step.study_id}/steps/{step.id}/details")

    ada.locator("#system_tag").fill("DCS-1")
    ada.locator("#basis").fill("Trip test record 12 (invented)")
    ada.get_by_role("button", name="Save details").click()
    expect(ada.locator(".saved-note")).to_have_text("✓ Saved.")

    ben.locator("#crew").fill("Shift A (invented)")
    ben.locator("#basis").fill("Vendor data sheet (invented)")
    ben.get_by_role("button", name="Save details").click()

    box = ben.locator("#basis-conflict[data-conflict]")
    expect(box).to_contain_text("Basis was changed by Ada Scribe (invented)")
    expect(box.locator(".conflict-theirs")).to_have_text("Trip test record 12 (invented)")
    expect(box.locator(".conflict-mine")).to_have_text("Vendor data sheet (invented)")
    expect(ben.locator("#basis")).to_have_value("Vendor data sheet (invented)")
    expect(ben.locator("[data-conflict]")).to_have_count(1)  # only the clashing field
    ben.screenshot(path=str(artifacts / "step-details-conflict.png"), full_page=True)
    assert reloaded(session, Step, step.id).basis == "Trip test record 12 (invented)"

    box.get_by_role("button", name="Keep mine").click()
    expect(ben.locator(".saved-note")).to_have_text("✓ Saved.")
    expect(ben.locator("#system_tag")).to_have_value("DCS-1")  # Ada's field, kept
    row = reloaded(session, Step, step.id)
    assert (row.basis, row.system_tag, row.crew) == (
        "Vendor data sheet (invented)", "DCS-1", "Shift A (invented)")
    choice = session.exec(select(ChangeLogEntry).where(ChangeLogEntry.action == "conflict")).one()
    assert (choice.author, choice.field, choice.new_value) == (
        "Ben Other (invented)", "basis", "Vendor data sheet (invented)")


def test_two_people_applying_the_proof_test_calculator_to_one_step(
    ada: Page, ben: Page, live_server: str, session: Session, artifacts: Path,
) -> None:
    """1oo1, λDU 1e-6 /h, T1 8760 h, MRT 8 h: 1e-6 x (4380 + 8) = 4.39e-3 (Ada);
    λDU 2e-7 /h: 2e-7 x 4388 = 8.78e-4 (Ben). IEC 61508-6 Annex B simplified equation."""
    step = make_step(session, make_scenario_tree(session), value=0.1, value_text="0.1",
                     description="Overfill trip")
    for page, lambda_du in ((ada, "1e-6"), (ben, "2e-7")):
        page.goto(f"{live_server}/studies/{step.study_id}/proof-test?step_id={step.id}")
        page.locator("#pt-lambda_du").fill(lambda_du)
    expect(ada.locator("#pfd-avg")).to_have_text("4.39e-3")
    expect(ben.locator("#pfd-avg")).to_have_text("8.78e-4")

    ada.locator("#apply-pfd").click()
    expect(ada.locator(".saved-note")).to_contain_text("The step now uses PFD 4.4e-3")
    ben.locator("#apply-pfd").click()

    box = ben.locator("#apply-conflict[data-conflict]")
    expect(box).to_contain_text("The step's PFD was changed by Ada Scribe (invented)")
    expect(box.locator(".conflict-theirs")).to_have_text("4.39e-3")
    expect(box.locator(".conflict-mine")).to_have_text("8.78e-4")
    ben.screenshot(path=str(artifacts / "proof-test-conflict.png"), full_page=True)
    assert reloaded(session, Step, step.id).value_text == "4.39e-3"

    box.get_by_role("button", name="Keep mine").click()
    expect(ben.locator(".saved-note")).to_contain_text("The step now uses PFD 8.8e-4")
    assert reloaded(session, Step, step.id).value_text == "8.78e-4"
