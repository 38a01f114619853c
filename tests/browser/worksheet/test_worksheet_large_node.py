# ruff: noqa: RUF001, RUF003 - the multiplication sign is what the page shows
"""In a real browser, a node of 180 scenarios: slim lines first, the rest as the scribe
scrolls, and a scenario far down opened and edited with the keyboard."""

import pytest
from playwright.sync_api import Page, expect
from sqlmodel import Session, select

from app.db.models import Deviation, Node, Scenario, Step
from app.likelihood.types import StepKind
from app.services.worksheet.sheet_rows import FIRST_PAINT_ROWS
from tests.factories import first_category, make_deviation, make_node, make_study

DEVIATIONS, PER_DEVIATION = 3, 60


@pytest.fixture
def big_node(session: Session) -> Node:
    """Three deviations of 60 scenarios, each 1/yr with one IPL at 1 in 10 (1e-5 tolerable)."""
    study = make_study(session)
    node = make_node(session, study)
    category = first_category(session, study)
    for d_index in range(DEVIATIONS):
        deviation = make_deviation(session, node, parameter=f"Level {d_index + 1}",
                                   position=d_index)
        for s_index in range(PER_DEVIATION):
            scenario = Scenario(study_id=study.id, deviation_id=deviation.id, position=s_index,
                                cause=f"Cause {d_index + 1}.{s_index + 1}",
                                consequence="Overfill", severity_category_id=category.id)
            session.add(scenario)
            session.flush()
            session.add_all([
                Step(study_id=study.id, scenario_id=scenario.id, position=0, value=1.0,
                     kind=StepKind.INITIATING_EVENT, description="Control loop failure"),
                Step(study_id=study.id, scenario_id=scenario.id, position=10, value=0.1,
                     value_text="1 in 10", kind=StepKind.IPL, description="High level trip")])
    session.commit()
    return node


def scenarios_of(session: Session, node: Node) -> list[Scenario]:
    """The node's scenarios in worksheet order."""
    return list(session.exec(
        select(Scenario).join(Deviation).where(Deviation.node_id == node.id)
        .order_by(Deviation.position, Scenario.position)).all())  # type: ignore[arg-type]


def test_a_large_node_paints_slim_lines_first_and_the_rest_arrives_as_the_scribe_scrolls(
    page: Page, live_server: str, session: Session, big_node: Node, artifacts: object
) -> None:
    page.goto(f"{live_server}/studies/{big_node.study_id}/nodes/{big_node.id}")
    expect(page.locator("#paged-note")).to_be_visible()
    expect(page.locator("article.scenario.slim")).to_have_count(FIRST_PAINT_ROWS)
    expect(page.locator("[data-value-field]")).to_have_count(0)
    first = page.locator("article.scenario.slim").first
    expect(first).to_contain_text("1.1.1 Cause 1.1 → Overfill")
    expect(first).to_contain_text("1.0e-1 /yr")  # 1/yr × 0.1
    expect(first).to_contain_text("▲ short ×1.0e4")  # 0.1 against 1e-5
    page.locator(f"#scenario-{scenarios_of(session, big_node)[0].id}").scroll_into_view_if_needed()
    page.screenshot(path=f"{artifacts}/worksheet-large-node-first-paint.png")
    scenarios = scenarios_of(session, big_node)
    far = scenarios[-1]
    for _ in range(40):  # scroll down until the last scenario has arrived
        if page.locator(f"#scenario-{far.id}").count():
            break
        page.mouse.wheel(0, 4000)
        page.wait_for_timeout(150)
    expect(page.locator("article.scenario.slim")).to_have_count(DEVIATIONS * PER_DEVIATION)
    expect(page.locator(f"#scenario-{far.id}")).to_contain_text("1.3.60 Cause 3.60")
    page.screenshot(path=f"{artifacts}/worksheet-large-node-slim.png")


def test_a_scenario_far_down_opens_in_full_and_its_value_edits_live(
    page: Page, live_server: str, session: Session, big_node: Node, artifacts: object
) -> None:
    scenarios = scenarios_of(session, big_node)
    far, before_far = scenarios[-1], scenarios[-2]
    page.goto(f"{live_server}/studies/{big_node.study_id}/nodes/{big_node.id}")
    for _ in range(60):  # to the end of the page until the last scenario has arrived
        if page.locator(f"#scenario-{far.id}").count():
            break
        page.evaluate("window.scrollTo(0, document.body.scrollHeight)")
        page.wait_for_timeout(150)
    page.locator(f"#scenario-{before_far.id} [data-open-scenario]").focus()
    page.keyboard.press("Enter")  # Enter on a slim line opens it, the cursor in its cause
    expect(page.locator(f"#sc-{before_far.id}-cause")).to_be_focused()
    page.locator(f"#scenario-{far.id} [data-open-scenario]").click()
    [layer] = [s for s in session.exec(select(Step).where(Step.scenario_id == far.id))
               if s.kind == StepKind.IPL]
    value = page.locator(f"#step-{layer.id}-value_text")
    value.fill("")
    value.press_sequentially("1 in 1000", delay=20)
    mitigated = page.locator(f"#scenario-{far.id}-results [data-figure='mitigated']")
    expect(mitigated).to_have_text("1.0e-3 /yr")
    session.expire_all()
    saved = session.get(Step, layer.id)
    assert saved is not None and saved.value_text == "1 in 1000"
    page.keyboard.press("Alt+KeyN")  # add an IPL: the worksheet is redrawn around the scribe
    new_layer = page.locator(f"#steps-{far.id} tr[data-kind='ipl']").nth(1)
    expect(new_layer.locator("[name='description']")).to_be_focused()
    expect(page.locator(f"#sc-{before_far.id}-cause")).to_be_visible()  # still open
    page.keyboard.type("Relief valve")
    page.keyboard.press("Tab")
    page.keyboard.type("1 in 10", delay=20)
    expect(mitigated).to_have_text("1.0e-4 /yr")  # 1/yr × 1e-3 × 0.1
    page.screenshot(path=f"{artifacts}/worksheet-large-node-open.png")
