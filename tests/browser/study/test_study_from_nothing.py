"""In a real browser, keyboard only: a study from a blank page to an exported file.

Every move is a key press: Tab until the wanted control has the focus (as a person tabs), then
Enter or typing. The test never clicks.
"""

import json
from pathlib import Path

from playwright.sync_api import Page, expect

from app.likelihood.types import StepKind

MAX_TABS = 400


def tab_to(page: Page, selector: str) -> None:
    """Press Tab until the focused element matches `selector` (fails if it is never reached)."""
    page.wait_for_load_state()  # the previous key may have opened a page
    for _ in range(MAX_TABS):
        if page.evaluate("s => document.activeElement && document.activeElement.matches(s)",
                         selector):
            return
        page.keyboard.press("Tab")
    raise AssertionError(f"{selector} has no keyboard route within {MAX_TABS} tabs")


def test_a_whole_study_from_nothing_with_the_keyboard_only(
    page: Page, live_server: str, artifacts: Path
) -> None:
    page.goto(live_server)
    tab_to(page, "#new-study")
    page.keyboard.press("Enter")
    page.wait_for_url("**/studies/new")
    expect(page.locator("#study-title")).to_be_focused()
    for text in ("Loading bay (invented)", "Invented terminal", "Tanker unloading", "A"):
        page.keyboard.type(text)
        page.keyboard.press("Tab")
    tab_to(page, "button[type=submit]")
    page.screenshot(path=str(artifacts / "new-study.png"))
    page.keyboard.press("Enter")

    # The empty study opens on a worksheet that adds the first node.
    expect(page.locator("#add-node")).to_be_focused()
    page.screenshot(path=str(artifacts / "empty-worksheet.png"))
    page.keyboard.type("Unloading arm")
    page.keyboard.press("Enter")
    expect(page.locator("#no-deviations")).to_be_visible()

    # Criteria first: scenarios are rated against them.
    tab_to(page, ".study-nav a[href$='/criteria']")
    page.keyboard.press("Enter")
    page.wait_for_url("**/criteria")
    tab_to(page, "#new-name")
    page.keyboard.type("Single fatality")
    tab_to(page, "#new-tolerable_frequency")
    page.keyboard.type("1e-5")
    page.keyboard.press("Enter")
    expect(page.locator("#criteria-message")).to_contain_text("'Single fatality' added.")

    tab_to(page, ".study-nav a[href$='/worksheet']")
    page.keyboard.press("Enter")
    page.wait_for_url("**/nodes/*")
    tab_to(page, "[data-add='deviation'] button")
    page.keyboard.press("Enter")
    expect(page.locator("[id^='dev-'][id$='-guideword']")).to_be_focused()
    page.keyboard.type("More")
    page.keyboard.press("Tab")
    page.keyboard.type("pressure")
    page.keyboard.press("Tab")
    tab_to(page, "[data-add='scenario'] button")
    page.keyboard.press("Enter")
    expect(page.locator("[id^='sc-'][id$='-cause']")).to_be_focused()
    page.keyboard.type("Blocked outlet during transfer")
    page.keyboard.press("Tab")
    page.keyboard.type("Hose rupture, release, one fatality")
    page.keyboard.press("Tab")
    # A new scenario has no severity until the team gives one (it is "incomplete").
    expect(page.locator("[data-figure='incomplete']")).to_contain_text("no severity yet")
    tab_to(page, "[id^='sc-'][id$='-severity_category_id']")
    page.keyboard.press("ArrowDown")  # from "— not given yet —" to the study's one category
    expect(page.locator("[data-figure='incomplete']")).not_to_contain_text("no severity yet")
    tab_to(page, "tr[data-kind='initiating_event'] [data-value-field]")
    page.keyboard.press("Control+a")
    page.keyboard.type("0.1/yr", delay=20)
    page.keyboard.press("Tab")

    typed = {StepKind.ENABLING_CONDITION: ("Transfer under way", "1 in 10"),
             StepKind.CONDITIONAL_MODIFIER: ("Operator present", "1 in 2"),
             StepKind.IPL: ("High pressure trip", "1 in 100")}
    for kind, (description, value) in typed.items():
        tab_to(page, f"[data-add='{kind.value}'] button")
        page.keyboard.press("Enter")
        expect(page.locator(f"tr[data-kind='{kind.value}'] [name='description']")).to_be_focused()
        page.keyboard.type(description)
        page.keyboard.press("Tab")
        page.keyboard.type(value, delay=20)
        page.keyboard.press("Tab")
    # 0.1 x 0.1 x 0.5 x 0.01 = 5e-5 per year
    expect(page.locator("[data-figure='mitigated']")).to_have_text("5.0e-5 /yr")
    page.screenshot(path=str(artifacts / "study-from-nothing.png"), full_page=True)

    tab_to(page, ".study-nav a[href$='/export']")
    page.keyboard.press("Enter")
    page.wait_for_url("**/export")
    tab_to(page, "a[download$='.json']")
    with page.expect_download() as download:
        page.keyboard.press("Enter")
    data = json.loads(download.value.path().read_text(encoding="utf-8"))
    assert data["study"]["title"] == "Loading bay (invented)"
    assert [c["name"] for c in data["severity_categories"]] == ["Single fatality"]
    [node] = data["nodes"]
    assert node["name"] == "Unloading arm"
    [deviation] = node["deviations"]
    assert (deviation["guideword"], deviation["parameter"]) == ("More", "pressure")
    [scenario] = deviation["scenarios"]
    assert scenario["cause"] == "Blocked outlet during transfer"
    steps = {s["kind"]: (s["description"], s["value_text"]) for s in scenario["steps"]}
    assert steps[StepKind.INITIATING_EVENT.value][1] == "0.1/yr"
    for kind, said in typed.items():
        assert steps[kind.value] == said
