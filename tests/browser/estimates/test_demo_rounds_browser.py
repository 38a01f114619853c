"""In a real browser: the demo study shows its finished rounds (`make run` loads it), the wide
round with its dissent, and the adopted word scale; the room view has no stale round in hand.

External check: the wide round's geometric mean against scipy.stats.gmean.
"""

from pathlib import Path

from playwright.sync_api import Page, expect
from scipy.stats import gmean
from sqlmodel import Session, col, select

from app.db.models import EstimateRound, Study
from app.likelihood.numbers import format_number

# The demo's nitrogen-outage ignition round 2 (invented): six estimates, one dissent.
WIDE = [3e-3, 1e-2, 0.1, 1e-2, 1e-2, 3e-2]
# Each estimate label's box on screen, and the drawing's, as the browser laid them out.
LABEL_BOXES_JS = """(svg) => {
  const outer = svg.getBoundingClientRect();
  const boxes = Array.from(svg.querySelectorAll('[data-mark="estimate"] text')).map(t => {
    const b = t.getBoundingClientRect(); return [b.left, b.right, b.top, b.bottom]; });
  return {outer: [outer.left, outer.right], boxes: boxes};
}"""


def _overlap(a: list[float], b: list[float]) -> bool:
    return a[0] < b[1] and b[0] < a[1] and a[2] < b[3] and b[2] < a[3]


def test_the_demo_study_shows_its_rounds_dissent_and_word_scale(
    page: Page, live_server: str, demo_study: Study, session: Session, artifacts: Path
) -> None:
    wide = session.exec(select(EstimateRound).where(
        EstimateRound.study_id == demo_study.id, col(EstimateRound.question).contains(
            "headspace"), EstimateRound.number == 2)).one()
    page.goto(f"{live_server}/studies/{demo_study.id}/rounds/{wide.id}")
    spread = page.locator("#round")
    expect(spread.locator('[data-mark="estimate"]')).to_have_count(6)
    expect(spread.locator("[data-figure=geometric-mean]").first).to_have_text(
        format_number(float(gmean(WIDE))))  # scipy: 1.4e-2
    expect(spread.locator("[data-figure=discuss]").first).to_be_visible()  # 1.5 orders
    expect(page.locator("#agreed")).to_contain_text("1.0e-2")
    expect(page.locator(".dissents")).to_contain_text("Desmond Achterberg dissents")
    page.screenshot(path=str(artifacts / "demo-round-dissent.png"), full_page=True)
    for drawing in page.locator("svg.spread-axis").all():  # this round's and round 1's
        laid = drawing.evaluate(LABEL_BOXES_JS)
        left, right = laid["outer"]
        boxes = laid["boxes"]
        assert len(boxes) == 6
        assert all(left <= box[0] and box[1] <= right for box in boxes), "a label runs off"
        assert not any(_overlap(a, b) for i, a in enumerate(boxes) for b in boxes[i + 1:])
    page.goto(f"{live_server}/studies/{demo_study.id}/word-scale")
    expect(page.locator("body")).to_contain_text("rare = 1.0e-3")
    page.goto(f"{live_server}/studies/{demo_study.id}/room")
    expect(page.locator('[data-mark="estimate"]')).to_have_count(0)  # every round finished
