"""The overview: every line inline for a small study, node summaries and lines on demand for a
large one; the figures are the same either way and equal a from-scratch computation.

A node's summary counts the added functions its scenarios short of target need per SIL band
(IEC 61511-1:2016, Table 4 bands, as the worksheet names them) and its worst gap; both are
checked against the whole study computed from scratch (`load_study_tree`), counted here by hand.
"""

import json
import re
from collections import Counter

import pytest
from fastapi.testclient import TestClient
from sqlmodel import Session

from app.demo import load_demo_study
from app.likelihood.numbers import format_orders
from app.likelihood.types import SilStatus
from app.services.exchange.study_import import import_study_text
from app.services.study import overview
from app.services.study.tree import load_study_tree
from bench.generate import build_study

ROW = re.compile(r'id="scenario-row-(\d+)"')


def rows_of(html: str) -> list[str]:
    """The scenario ids of the lines shown, in order."""
    return ROW.findall(html)


def line_html(html: str, scenario_id: str) -> str:
    """One scenario line's markup."""
    start = html.index(f'id="scenario-row-{scenario_id}"')
    return html[start:html.index("</tr>", start)]


def expected_summaries(session: Session, study_id: int) -> dict[int, tuple[Counter[str], str]]:
    """Per node, from scratch: SIL bands needed (counted by hand from each target's status)
    and the worst gap as shown."""
    found: dict[int, tuple[Counter[str], str]] = {}
    for branch in load_study_tree(session, study_id).nodes:
        bands: Counter[str] = Counter()
        gaps = []
        for item in branch.scenario_branches():
            figures = item.outcome.figures(withdrawn=False)
            if figures is None:
                continue
            result = figures.result
            gaps.append(result.gap_orders)
            if not result.meets_target:
                target = result.sil_target
                bands[{SilStatus.SIL: f"SIL {target.sil}", SilStatus.BELOW_SIL1: "Below SIL 1",
                       SilStatus.BEYOND_ONE_FUNCTION: "Beyond one function"}.get(
                    target.status, target.label)] += 1
        found[branch.node.id or 0] = (bands, format_orders(max(gaps)) if gaps else "")
    return found


def shown_summaries(html: str, node_ids: list[int]) -> dict[int, tuple[Counter[str], str]]:
    """Per node, the summary as the page shows it."""
    found = {}
    for node_id in node_ids:
        section = html[html.index(f'id="node-{node_id}"'):]
        section = section[:section.index("</section>")]
        bands = Counter({band: int(count) for band, count in re.findall(
            r'data-band="([^"]+)">[^<]* \u00d7 (\d+)<', section)})
        worst = re.search(r"data-worst-gap>([^<]+)<", section)
        found[node_id] = (bands, worst.group(1) if worst else "")
    return found


def test_a_small_study_shows_every_line_inline_with_node_summaries(
    client: TestClient, session: Session
) -> None:
    study_id = load_demo_study(session).id or 0
    html = client.get(f"/studies/{study_id}").text
    tree = load_study_tree(session, study_id)
    assert rows_of(html) == [str(s.scenario.id) for n in tree.nodes
                             for s in n.scenario_branches()]
    assert "data-open-lines" not in html and 'id="summaries-note"' not in html
    assert shown_summaries(html, [n.node.id or 0 for n in tree.nodes]) == \
        expected_summaries(session, study_id)


def test_a_large_study_shows_summaries_and_opens_a_nodes_lines_page_by_page(
    client: TestClient, session: Session, monkeypatch: pytest.MonkeyPatch
) -> None:
    study_id = load_demo_study(session).id or 0
    inline = client.get(f"/studies/{study_id}").text
    monkeypatch.setattr(overview, "INLINE_LIMIT", 3)
    monkeypatch.setattr(overview, "LINES_PAGE", 2)
    html = client.get(f"/studies/{study_id}").text
    assert rows_of(html) == [] and 'id="summaries-note"' in html
    tree = load_study_tree(session, study_id)
    node = max(tree.nodes, key=lambda n: len(n.scenario_branches()))
    ids = [str(s.scenario.id) for s in node.scenario_branches()]
    assert len(ids) > 2
    assert f'data-open-lines="{node.node.id}"' in html
    url = f"/studies/{study_id}/nodes/{node.node.id}/lines"
    shown: list[str] = []
    start = 0
    while True:
        page = client.get(f"{url}?lines_from={start}")
        assert page.status_code == 200 and "<html" in page.text  # a page without JavaScript
        part = client.get(f"{url}?lines_from={start}", headers={"HX-Request": "true"})
        assert "<html" not in part.text and rows_of(part.text) == rows_of(page.text)
        shown += rows_of(page.text)
        for scenario_id in rows_of(page.text):  # the same figures as the inline line
            assert line_html(page.text, scenario_id) == line_html(inline, scenario_id)
        if 'data-page="next"' not in page.text:
            break
        start += 2
    assert shown == ids
    assert shown_summaries(html, [n.node.id or 0 for n in tree.nodes]) == \
        expected_summaries(session, study_id)


def test_a_generated_study_above_the_limit_shows_summaries_equal_to_a_recomputation(
    client: TestClient, session: Session
) -> None:
    study_id = import_study_text(session, json.dumps(build_study(260, seed=3))).id or 0
    html = client.get(f"/studies/{study_id}").text
    assert rows_of(html) == [] and html.count("data-open-lines=") >= 1
    tree = load_study_tree(session, study_id)
    assert shown_summaries(html, [n.node.id or 0 for n in tree.nodes]) == \
        expected_summaries(session, study_id)
    node_id = tree.nodes[0].node.id
    part = client.get(f"/studies/{study_id}/nodes/{node_id}/lines",
                      headers={"HX-Request": "true"}).text
    assert len(rows_of(part)) == min(100, len(tree.nodes[0].scenario_branches()))


def test_lines_of_a_node_of_another_study_are_not_found(client: TestClient,
                                                         session: Session) -> None:
    study_id = load_demo_study(session).id or 0
    assert client.get(f"/studies/{study_id}/nodes/999999/lines").status_code == 404
    assert client.get(f"/studies/{study_id}/nodes/1/lines?lines_from=-1").status_code == 422
