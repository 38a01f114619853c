"""The overview and the risk picture of a generated 2,000-scenario study in a real browser, at
a laptop's 1366 x 768: node summaries, a node's lines opened in place, lists paged."""

import json
import re
from pathlib import Path

from playwright.sync_api import Page, expect
from sqlmodel import Session

from app.likelihood.numbers import format_orders
from app.services.exchange.study_import import import_study_text
from app.services.risk.picture import build_risk_picture
from app.services.risk.stored_picture import PAGE_SIZE
from app.services.study.tree import load_study_tree
from bench.generate import build_study

LAPTOP = {"width": 1366, "height": 768}


def test_a_large_studys_overview_opens_a_nodes_lines_and_the_risk_picture_pages(
    page: Page, live_server: str, session: Session, artifacts: Path
) -> None:
    study_id = import_study_text(session, json.dumps(build_study(2000, seed=5))).id or 0
    tree = load_study_tree(session, study_id)
    scratch = build_risk_picture(tree)
    first = tree.nodes[0]
    gaps = [s.outcome.figures(withdrawn=False) for s in first.scenario_branches()]
    worst = format_orders(max(f.result.gap_orders for f in gaps if f is not None))
    page.set_viewport_size(LAPTOP)

    page.goto(f"{live_server}/studies/{study_id}")
    expect(page.locator("#summaries-note")).to_contain_text("2000 scenarios")
    expect(page.locator("tr[data-scenario]")).to_have_count(0)
    node = page.locator(f"#node-{first.node.id}")
    expect(node.locator("[data-worst-gap]")).to_have_text(worst)
    page.screenshot(path=str(artifacts / "overview-large.png"))
    node.locator("[data-open-lines]").click()
    lines = page.locator(f"#node-lines-{first.node.id} tbody tr")
    expect(lines).to_have_count(100)
    expect(lines.first).to_have_attribute("data-scenario",
                                          str(first.scenario_branches()[0].scenario.id))
    node.locator('[data-page="next"]').first.click()
    expect(lines.first).to_have_attribute("data-scenario",
                                          str(first.scenario_branches()[100].scenario.id))
    assert page.url == f"{live_server}/studies/{study_id}"  # opened in place
    node.locator("[data-open-lines]").click()  # the summary closes the lines again
    expect(lines.first).to_be_hidden()
    node.locator("[data-open-lines]").click()  # and opens them where they were
    expect(lines.first).to_have_attribute("data-scenario",
                                          str(first.scenario_branches()[100].scenario.id))
    node.scroll_into_view_if_needed()
    page.screenshot(path=str(artifacts / "overview-large-node-open.png"))

    page.goto(f"{live_server}/studies/{study_id}/risk")
    ranked = page.locator("#ranked-table tbody tr")
    expect(ranked).to_have_count(PAGE_SIZE)
    expect(page.locator('[data-list="ranked"]').first).to_contain_text(
        f"Lines 1\u2013{PAGE_SIZE} of {len(scratch.ranked)}.")
    counts = page.locator("g.matrix-cell").evaluate_all(
        "cells => cells.map(c => Number(c.dataset.count))")
    assert counts == [c.count for c in scratch.matrix.cells]
    sil = page.locator("#sil-count-table tbody tr").all_inner_texts()
    assert [re.split(r"\s+", t.strip())[-2:] for t in sil] == [
        [str(b.low_demand), str(b.high_demand)] for b in scratch.sil_counts]
    page.screenshot(path=str(artifacts / "risk-large.png"))
    page.locator('[data-list="ranked"] [data-page="next"]').click()
    expect(ranked.first.locator("td").first).to_have_text(str(PAGE_SIZE + 1))
    expect(ranked.first).to_have_attribute("data-scenario",
                                           str(scratch.ranked[PAGE_SIZE].scenario_id))
