# ruff: noqa: RUF001 - the multiplication sign is what the page shows
"""In a real browser: the figures always show the newest saved state, whatever order the
replies to a severity change and a value edit come back in.

Each test holds one request (before the server sees it) or one reply (after the server saved and
answered) until the other edit's reply is on screen, then lets it through. Any: a held reply is
Playwright's APIResponse, or None for a request not yet sent on.
"""

from collections.abc import Iterator
from typing import Any

import pytest
from playwright.sync_api import Locator, Page, Route, expect
from sqlmodel import Session

from app.db.models import Deviation, Scenario, SeverityCategory, Step, Study
from tests.factories import make_category, make_scenario_tree, make_step


@pytest.fixture
def layer(session: Session) -> Iterator[Step]:
    """IE 0.1/yr with one IPL at 1 in 10 against 1e-5/yr; the study also rates 1e-4/yr."""
    scenario = make_scenario_tree(session)
    yield make_step(session, scenario, value=0.1, value_text="1 in 10", description="Trip")


def open_worksheet(page: Page, live_server: str, session: Session, step: Step) -> None:
    """Open the worksheet of the node holding the step."""
    scenario = session.get(Scenario, step.scenario_id)
    assert scenario is not None
    deviation = session.get(Deviation, scenario.deviation_id)
    assert deviation is not None
    page.goto(f"{live_server}/studies/{step.study_id}/nodes/{deviation.node_id}")


def major_injury(session: Session, step: Step) -> SeverityCategory:
    """A second category, 1e-4/yr, for the severity to change to."""
    study = session.get(Study, step.study_id)
    assert study is not None
    return make_category(session, study, name="Major injury", tolerable_frequency=1e-4)


def figure(page: Page, step: Step, name: str) -> Locator:
    """One computed figure of the step's scenario."""
    return page.locator(f"#scenario-{step.scenario_id}-results [data-figure='{name}']")


def hold_first(page: Page, pattern: str, *, answered: bool) -> list[tuple[Route, Any]]:
    """Hold the first matching request: before the server sees it (answered=False), or after
    the server has saved and answered it, keeping the reply from the page (answered=True)."""
    held: list[tuple[Route, Any]] = []

    def handler(route: Route) -> None:
        if held:
            route.continue_()
        else:
            held.append((route, route.fetch() if answered else None))

    page.route(pattern, handler)
    return held


def release(page: Page, held: list[tuple[Route, Any]]) -> None:
    """Let the held request or reply go on, and give htmx time to swap it in (or drop it)."""
    assert len(held) == 1
    route, response = held[0]
    if response is None:
        route.continue_()
    else:
        route.fulfill(response=response)
    page.wait_for_timeout(600)


def type_value(page: Page, step: Step, text: str) -> None:
    """Replace the step's value as a person types it."""
    field = page.locator(f"#step-{step.id}-value_text")
    field.click()
    field.press("Control+a")
    field.press_sequentially(text, delay=20)


def choose_severity(page: Page, step: Step, category: SeverityCategory) -> None:
    page.select_option(f"#sc-{step.scenario_id}-severity_category_id", str(category.id))


def expect_newest(page: Page, step: Step) -> None:
    """IE 0.1 times IPL 1e-3 = 1e-4/yr against Major injury's 1e-4/yr: exactly at target."""
    expect(figure(page, step, "mitigated")).to_have_text("1.0e-4 /yr")
    expect(figure(page, step, "tolerable")).to_have_text("1.0e-4 /yr")
    expect(figure(page, step, "gap")).to_have_text("× 1.0e0 · +0.0 orders")


# A reply to the first edit arrives after the second edit's reply replaced the figures: the
# old page swapped it into the replaced (detached) element, so it never showed.

def test_a_severity_change_while_a_value_is_on_its_way_shows_both(
    page: Page, live_server: str, session: Session, layer: Step
) -> None:
    category = major_injury(session, layer)
    open_worksheet(page, live_server, session, layer)
    held = hold_first(page, "**/value", answered=False)
    type_value(page, layer, "1 in 1000")
    page.wait_for_timeout(400)  # the debounce fired; the request waits before the server
    choose_severity(page, layer, category)
    expect(figure(page, layer, "tolerable")).to_have_text("1.0e-4 /yr")
    release(page, held)
    expect_newest(page, layer)


def test_a_value_typed_while_a_severity_change_is_on_its_way_shows_both(
    page: Page, live_server: str, session: Session, layer: Step
) -> None:
    category = major_injury(session, layer)
    open_worksheet(page, live_server, session, layer)
    held = hold_first(page, "**/scenarios/*", answered=False)
    choose_severity(page, layer, category)
    page.wait_for_timeout(300)
    type_value(page, layer, "1 in 1000")
    expect(figure(page, layer, "mitigated")).to_have_text("1.0e-4 /yr")
    release(page, held)
    expect_newest(page, layer)


# A reply computed from an older saved state arrives last: the page keeps the newer figures.

def test_a_late_reply_to_a_value_never_brings_back_the_old_target(
    page: Page, live_server: str, session: Session, layer: Step
) -> None:
    category = major_injury(session, layer)
    open_worksheet(page, live_server, session, layer)
    held = hold_first(page, "**/value", answered=True)
    type_value(page, layer, "1 in 1000")
    page.wait_for_timeout(400)  # saved; the reply (target 1e-5) is held
    choose_severity(page, layer, category)
    expect(figure(page, layer, "tolerable")).to_have_text("1.0e-4 /yr")
    release(page, held)
    expect_newest(page, layer)


def test_a_late_reply_to_a_severity_change_never_brings_back_the_old_frequency(
    page: Page, live_server: str, session: Session, layer: Step
) -> None:
    category = major_injury(session, layer)
    open_worksheet(page, live_server, session, layer)
    held = hold_first(page, "**/scenarios/*", answered=True)
    choose_severity(page, layer, category)
    page.wait_for_timeout(300)  # saved; the reply (mitigated 1e-2) is held
    type_value(page, layer, "1 in 1000")
    expect(figure(page, layer, "mitigated")).to_have_text("1.0e-4 /yr")
    release(page, held)
    expect_newest(page, layer)
