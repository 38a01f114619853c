"""In a real browser, keyboard only: Enter adds a row, Escape cancels, move, delete and undo."""

import pytest
from playwright.sync_api import Dialog, Page, expect
from sqlmodel import Session, select

from app.db.models import Deviation, Scenario, Step
from app.likelihood.types import StepKind
from tests.factories import make_scenario_tree, make_step


@pytest.fixture
def scenario(session: Session) -> Scenario:
    """A scenario (0.1/yr against 1e-5/yr) with one IPL at 1 in 10."""
    scenario = make_scenario_tree(session)
    make_step(session, scenario, value=0.1, value_text="1 in 10", description="High level trip")
    return scenario


def open_worksheet(page: Page, live_server: str, session: Session, scenario: Scenario) -> None:
    """Open the worksheet of the scenario's node."""
    deviation = session.get(Deviation, scenario.deviation_id)
    assert deviation is not None
    page.goto(f"{live_server}/studies/{scenario.study_id}/nodes/{deviation.node_id}")


def layers(session: Session, scenario: Scenario) -> list[Step]:
    """The scenario's IPL steps in order, read fresh."""
    session.expire_all()
    return list(session.exec(select(Step).where(
        Step.scenario_id == scenario.id, Step.kind == StepKind.IPL)
        .order_by(Step.position, Step.id)).all())  # type: ignore[arg-type]


def test_enter_after_the_last_field_goes_to_the_add_button_which_adds_with_its_own_enter(
    page: Page, live_server: str, session: Session, scenario: Scenario
) -> None:
    open_worksheet(page, live_server, session, scenario)
    [first] = layers(session, scenario)
    page.locator(f"#step-{first.id}-basis").click()
    page.keyboard.type("Trip tested yearly")
    page.keyboard.press("Enter")
    expect(page.locator(f"#step-{first.id}-credited")).to_be_focused()
    page.keyboard.press("Enter")
    add_ipl = page.locator(f"#scenario-{scenario.id} [data-add='ipl'] button")
    expect(add_ipl).to_be_focused()
    assert len(layers(session, scenario)) == 1  # nothing added yet
    page.keyboard.press("Enter")
    new_description = page.locator(f"#steps-{scenario.id} tr[data-kind='ipl']").nth(1).locator(
        "[name='description']")
    expect(new_description).to_be_focused()
    page.keyboard.type("Relief valve")
    page.keyboard.press("Tab")
    page.keyboard.type("1 in 100", delay=20)
    results = page.locator(f"#scenario-{scenario.id}-results [data-figure='mitigated']")
    expect(results).to_have_text("1.0e-4 /yr")
    saved = layers(session, scenario)
    assert [(s.description, s.value_text, s.basis) for s in saved] == [
        ("High level trip", "1 in 10", "Trip tested yearly"), ("Relief valve", "1 in 100", "")]


def test_escape_cancels_an_edit(page: Page, live_server: str, session: Session,
                                scenario: Scenario) -> None:
    open_worksheet(page, live_server, session, scenario)
    cause = page.locator(f"#sc-{scenario.id}-cause")
    cause.click()
    page.keyboard.press("End")
    page.keyboard.type(" and nobody notices")
    page.keyboard.press("Escape")
    expect(cause).to_have_value("Level control fails high")
    [layer] = layers(session, scenario)
    value = page.locator(f"#step-{layer.id}-value_text")
    value.click()
    page.keyboard.press("End")
    page.keyboard.type("00", delay=20)
    expect(page.locator(f"#step-{layer.id}-value_text-said")).to_have_text("1 in 1,000 · 1.0e-3")
    page.keyboard.press("Escape")  # back to the text it had on entry, saved again
    expect(value).to_have_value("1 in 10")
    expect(page.locator(f"#step-{layer.id}-value_text-said")).to_have_text("1 in 10 · 1.0e-1")
    page.keyboard.press("Tab")
    session.expire_all()
    stored = session.get(Scenario, scenario.id)
    assert stored is not None and stored.cause == "Level control fails high"
    assert [(s.value, s.value_text) for s in layers(session, scenario)] == [(0.1, "1 in 10")]


def test_alt_arrows_move_a_step_and_keep_the_focus(page: Page, live_server: str,
                                                   session: Session, scenario: Scenario) -> None:
    second = make_step(session, scenario, description="Relief valve", value=0.01, position=20)
    open_worksheet(page, live_server, session, scenario)
    page.locator(f"#step-{second.id}-description").click()
    page.keyboard.press("Alt+ArrowUp")
    expect(page.locator(f"#steps-{scenario.id} tr[data-kind='ipl']").first).to_have_id(
        f"step-row-{second.id}")
    expect(page.locator(f"#step-{second.id}-description")).to_be_focused()
    assert [s.description for s in layers(session, scenario)] == ["Relief valve",
                                                                  "High level trip"]


def test_delete_asks_first_and_the_last_delete_can_be_undone(
    page: Page, live_server: str, session: Session, scenario: Scenario
) -> None:
    open_worksheet(page, live_server, session, scenario)
    [layer] = layers(session, scenario)
    questions: list[str] = []

    def answer(dialog: Dialog) -> None:
        questions.append(dialog.message)
        dialog.accept()

    page.on("dialog", answer)
    page.locator(f"#step-{layer.id}-description").click()
    page.keyboard.press("Alt+Delete")
    expect(page.locator(f"#step-row-{layer.id}")).to_have_count(0)
    assert questions == ["Delete step 'High level trip' (independent protection layer)?"]
    assert layers(session, scenario) == []
    expect(page.locator("#undo-button")).to_be_focused()
    expect(page.locator(f"#scenario-{scenario.id}-results [data-figure='mitigated']")
           ).to_have_text("1.0e-1 /yr")
    page.keyboard.press("Alt+z")
    expect(page.locator(f"#steps-{scenario.id} tr[data-kind='ipl'] [name='description']")
           ).to_be_focused()
    expect(page.locator(f"#scenario-{scenario.id}-results [data-figure='mitigated']")
           ).to_have_text("1.0e-2 /yr")
    assert [(s.description, s.value_text) for s in layers(session, scenario)] == [
        ("High level trip", "1 in 10")]


def test_the_initiating_event_offers_no_delete(page: Page, live_server: str,
                                               session: Session, scenario: Scenario) -> None:
    open_worksheet(page, live_server, session, scenario)
    row = page.locator(f"#steps-{scenario.id} tr[data-kind='initiating_event']")
    expect(row.locator("[data-delete]")).to_have_count(0)
    row.locator("[name='description']").click()
    page.keyboard.press("Alt+Delete")
    expect(row).to_have_count(1)


def test_space_on_the_credited_box_takes_the_layer_out_of_the_sum(
    page: Page, live_server: str, session: Session, scenario: Scenario
) -> None:
    open_worksheet(page, live_server, session, scenario)
    [layer] = layers(session, scenario)
    page.locator(f"#step-{layer.id}-basis").click()
    page.keyboard.press("Tab")
    expect(page.locator(f"#step-{layer.id}-credited")).to_be_focused()
    page.keyboard.press("Space")
    mitigated = page.locator(f"#scenario-{scenario.id}-results [data-figure='mitigated']")
    expect(mitigated).to_have_text("1.0e-1 /yr")
    assert [s.credited for s in layers(session, scenario)] == [False]
    page.keyboard.press("Space")
    expect(mitigated).to_have_text("1.0e-2 /yr")


def test_keys_typed_as_text_never_add_a_blank_step(
    page: Page, live_server: str, session: Session, scenario: Scenario
) -> None:
    """Enter at the end of a row, then more words with spaces: no new row (on the old page the
    second Enter itself added a blank step)."""
    open_worksheet(page, live_server, session, scenario)
    [first] = layers(session, scenario)
    page.locator(f"#step-{first.id}-basis").click()
    page.keyboard.type("Trip tested yearly")
    page.keyboard.press("Enter")  # to Credited
    page.keyboard.press("Enter")  # to the add button: nothing added
    add_ipl = page.locator(f"#scenario-{scenario.id} [data-add='ipl'] button")
    expect(add_ipl).to_be_focused()
    page.keyboard.type(" and after each turnaround ")  # spaces land on the button
    page.wait_for_timeout(500)
    saved = layers(session, scenario)
    assert [(s.description, s.basis) for s in saved] == [("High level trip",
                                                          "Trip tested yearly")]


def test_space_on_an_add_button_adds_nothing(
    page: Page, live_server: str, session: Session, scenario: Scenario
) -> None:
    open_worksheet(page, live_server, session, scenario)
    add_ipl = page.locator(f"#scenario-{scenario.id} [data-add='ipl'] button")
    add_ipl.focus()
    page.keyboard.press(" ")
    page.wait_for_timeout(500)
    assert len(layers(session, scenario)) == 1
