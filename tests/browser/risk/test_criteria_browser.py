"""Editing a risk criterion in a real browser re-evaluates the study's scenarios."""

import re
from pathlib import Path

from playwright.sync_api import Page, expect

from app.db.models import Study


def test_changing_a_tolerable_frequency_reports_the_re_evaluation(
    page: Page, live_server: str, demo_study: Study, artifacts: Path
) -> None:
    page.goto(f"{live_server}/studies/{demo_study.id}/criteria")
    expect(page.locator("#criteria-basis")).to_contain_text(re.compile("invented", re.I))
    form = page.locator("form.category-row").filter(has=page.locator('input[value^="P4"]'))
    form.locator('input[name="tolerable_frequency"]').fill("1 in 1,000,000 years")
    form.get_by_role("button", name="Save").click()
    expect(page.locator("#criteria-message")).to_contain_text("scenarios re-evaluated")
    expect(page.locator("#criteria-table")).to_contain_text("once in 1,000,000 years")
    page.screenshot(path=str(artifacts / "criteria.png"), full_page=True)
    form = page.locator("form.category-row").filter(has=page.locator('input[value^="P4"]'))
    form.locator('input[name="tolerable_frequency"]').fill("now and then")
    form.get_by_role("button", name="Save").click()
    expect(page.locator(".field-error").first).to_contain_text("Tolerable frequency: not a number")
    expect(form.locator('input[name="tolerable_frequency"]')).to_have_value("now and then")
