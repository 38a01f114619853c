"""In a real browser: typing an error factor on a step moves the scenario's 5-95 % band, its
P(meets target) and the band on the ladder, without a reload.

External check: the expected texts from scipy.stats.lognorm (IE 0.1 /yr exact, an IPL at PFD
1e-3 with the typed EF: median 1e-4 /yr, sigma = ln EF / z95; target 1e-5 /yr).
"""

import math
from collections.abc import Iterator
from pathlib import Path

import pytest
from playwright.sync_api import Page, expect
from scipy import stats
from sqlmodel import Session

from app.db.models import Step, Study
from app.likelihood.numbers import format_number, probability_text
from tests.browser.worksheet.test_worksheet_live import open_worksheet, retype, saved
from tests.factories import make_scenario_tree, make_step


@pytest.fixture
def layer(session: Session) -> Iterator[Step]:
    scenario = make_scenario_tree(session)
    yield make_step(session, scenario, value=1e-3, value_text="1e-3",
                    description="High level trip")


def expected(ef: float) -> tuple[str, str]:
    frozen = stats.lognorm(s=math.log(ef) / stats.norm.ppf(0.95), scale=1e-4)  # scipy
    band = f"{format_number(frozen.ppf(0.05))} to {format_number(frozen.ppf(0.95))} /yr"
    return band, probability_text(frozen.cdf(1e-5))


def test_typing_an_ef_moves_the_band_and_p_meets(page: Page, live_server: str,
                                                 session: Session, layer: Step,
                                                 artifacts: Path) -> None:
    open_worksheet(page, live_server, session, layer)
    results = page.locator(f"#scenario-{layer.scenario_id}-results")
    expect(results.locator("[data-spread='band']")).to_have_text("1.0e-4 to 1.0e-4 /yr")
    expect(results.locator("[data-spread='p-meets']")).to_have_text("0 %")
    expect(results.locator("[data-ladder='band']")).to_have_count(0)  # exact: no band drawn
    page.evaluate("window.loadedOnce = true")
    field = page.locator(f"#step-{layer.id}-error_factor")
    retype(field, "30")
    field.press("Tab")
    band, p_meets = expected(30)
    expect(results.locator("[data-spread='band']")).to_have_text(band)
    expect(results.locator("[data-spread='p-meets']")).to_have_text(p_meets)
    expect(results.locator("[data-ladder='band']")).to_have_count(1)
    expect(page.locator(f"#step-{layer.id}-error_factor-said")).to_have_text("EF 30, typed")
    assert page.evaluate("window.loadedOnce") is True  # no reload
    results.screenshot(path=str(artifacts / "worksheet-uncertainty-ef30.png"))
    retype(field, "3")
    field.press("Tab")
    band, p_meets = expected(3)
    expect(results.locator("[data-spread='band']")).to_have_text(band)
    expect(results.locator("[data-spread='p-meets']")).to_have_text(p_meets)
    session.expire_all()
    row = session.get(Step, layer.id)
    assert row is not None and row.error_factor == 3.0
    assert saved(session, layer) == (1e-3, "1e-3")  # the value itself untouched
    page.screenshot(path=str(artifacts / "worksheet-uncertainty.png"), full_page=False)


def test_the_risk_picture_lists_uncertain_verdicts_in_the_demo(
        page: Page, live_server: str, demo_study: Study, artifacts: Path) -> None:
    """The invented demo study's error factors (defaults, a typed EF, rounds, typical ranges)
    leave some verdicts uncertain; the list shows each with its P(meets target), lowest first."""
    page.goto(f"{live_server}/studies/{demo_study.id}/risk")
    section = page.locator("#uncertain-verdicts")
    cells = section.locator("[data-p-meets]")
    expect(cells.first).to_be_visible()
    shown = cells.all_inner_texts()
    numbers = [float(text.strip(" %<>")) for text in shown]
    assert numbers == sorted(numbers) and all(0 < n < 100 for n in numbers)
    section.screenshot(path=str(artifacts / "risk-uncertain-verdicts.png"))
