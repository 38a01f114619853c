"""Low vision, measured in Chromium from computed styles: a focus ring of at least 3:1 against
what is behind it on every Tab stop, field and figure labels of at least 12 px, and pages that
reflow at 320 CSS px without sideways scrolling (the actions table also at 1280 x 720).

Sources: WCAG 2.1 (W3C Recommendation, 2018) 1.4.11 non-text contrast (3:1 for the visual
information needed to identify a component's state, here the focus indicator) and 1.4.10
reflow (320 CSS px wide); 12 px as the smallest label size is common practice, no source.
The contrast formula is checked against WCAG's own worked extremes below.
"""

from pathlib import Path

import pytest
from playwright.sync_api import Browser, Page
from sqlmodel import Session, select

from app.db.models import Node, Study
from tests.browser.accessibility import (
    axe_violations,
    contrast_ratio,
    focus_ring,
    horizontal_overflow,
)


def test_the_contrast_formula_gives_wcags_extremes_and_a_hand_computed_pair() -> None:
    assert contrast_ratio((0, 0, 0), (255, 255, 255)) == pytest.approx(21.0)
    assert contrast_ratio((119, 119, 119), (119, 119, 119)) == pytest.approx(1.0)
    # #767676 on white: L = ((0x76/255 + 0.055)/1.055)^2.4 = 0.18116; (1.05)/(0.23116) = 4.54
    assert contrast_ratio((0x76, 0x76, 0x76), (255, 255, 255)) == pytest.approx(4.54, abs=0.01)


def pages_of(study: Study, node_id: int) -> dict[str, str]:
    base = f"/studies/{study.id}"
    return {"study list": "/", "overview": base, "worksheet": f"{base}/nodes/{node_id}",
            "room view": f"{base}/room", "risk picture": f"{base}/risk",
            "actions": f"{base}/actions", "criteria": f"{base}/criteria",
            "exports": f"/studies/{study.id}/export", "keyboard help": "/help/keys"}


def first_node(session: Session, study: Study) -> int:
    node = session.exec(select(Node.id).where(Node.study_id == study.id)
                        .order_by(Node.position)).first()  # type: ignore[arg-type]
    assert node is not None
    return int(node)


def weak_rings(page: Page, stops: int) -> list[str]:
    """Tab stops whose focus ring is missing, thinner than 2 px or below 3:1."""
    page.locator("body").focus()
    weak: list[str] = []
    for _ in range(stops):
        page.keyboard.press("Tab")
        if page.evaluate("() => document.activeElement === document.body"):
            break
        ring = focus_ring(page)
        ratio = contrast_ratio(tuple(ring["outline"]), tuple(ring["background"]))
        if ring["outlineStyle"] == "none" or ring["width"] < 2 or ratio < 3:
            weak.append(f"{ring['id']}: {ring['outlineStyle']} {ring['width']}px {ratio:.2f}:1")
    return weak


def test_every_tab_stop_shows_a_focus_ring_of_at_least_3_to_1(
    page: Page, live_server: str, session: Session, demo_study: Study
) -> None:
    found: dict[str, list[str]] = {}
    for name, path in pages_of(demo_study, first_node(session, demo_study)).items():
        page.goto(f"{live_server}{path}")
        if weak := weak_rings(page, stops=120):
            found[name] = sorted(set(weak))
    assert found == {}


LABEL_SIZES = """() => Array.from(document.querySelectorAll(
    'main label, main .cell-label, main dt, main th, main figcaption, main caption'))
  .filter(el => el.getClientRects().length && !el.closest('.visually-hidden') &&
          getComputedStyle(el).position !== 'absolute')
  .map(el => [el.className || el.tagName, parseFloat(getComputedStyle(el).fontSize)])
  .filter(([, size]) => size < 12)"""


def test_field_and_figure_labels_are_at_least_12_px(
    page: Page, live_server: str, session: Session, demo_study: Study
) -> None:
    found = {}
    for name, path in pages_of(demo_study, first_node(session, demo_study)).items():
        page.goto(f"{live_server}{path}")
        if small := page.evaluate(LABEL_SIZES):
            found[name] = sorted({f"{cls} {size}px" for cls, size in small})
    assert found == {}


NARROW = {"width": 320, "height": 640}


def test_worksheet_room_risk_and_actions_reflow_at_320_px(
    browser: Browser, live_server: str, session: Session, demo_study: Study, artifacts: Path
) -> None:
    context = browser.new_context(viewport=NARROW)
    page = context.new_page()
    pages = pages_of(demo_study, first_node(session, demo_study))
    overflow: dict[str, object] = {}
    for name in ["worksheet", "room view", "risk picture", "actions", "study list", "overview",
                 "criteria", "exports"]:
        page.goto(f"{live_server}{pages[name]}")
        shot = artifacts / f"reflow-320-{name.replace(' ', '-')}.png"
        page.screenshot(path=str(shot), full_page=True)
        if sideways := horizontal_overflow(page):
            overflow[name] = sideways
        if violations := axe_violations(page):  # a table that scrolls must be on the Tab route
            overflow[name] = violations
    context.close()
    assert overflow == {}


def test_the_actions_table_fits_a_1280_by_720_screen(
    browser: Browser, live_server: str, demo_study: Study
) -> None:
    context = browser.new_context(viewport={"width": 1280, "height": 720})
    page = context.new_page()
    page.goto(f"{live_server}/studies/{demo_study.id}/actions")
    assert horizontal_overflow(page) == 0
    context.close()
