"""The risk picture read from the stored rows equals the picture computed from scratch.

`build_risk_picture` (services/risk/picture.py) loads and computes the whole study, as the
report does; the page reads `scenario_result` and pages its long lists. Every figure the page
shows must be the from-scratch figure: each list walked page by page and joined equals the
whole list, and the matrix, sums, SIL counts and node counts are equal outright. Checked on the
demo study (small pages, so its lists span several) and on a generated study of 600 scenarios
(bench/generate.py) with study default error factors set, so it has uncertain verdicts too.
"""

import json
from typing import Any

import pytest
from sqlmodel import Session

from app.db.models import Study
from app.demo import load_demo_study
from app.services.exchange.study_import import import_study_text
from app.services.risk import stored_picture
from app.services.risk.picture import RiskPicture, build_risk_picture, select_cell
from app.services.risk.stored_picture import LISTS, StoredRiskPage, read_stored_risk_page
from app.services.study.tree import load_study_tree
from bench.generate import build_study

PAGED = {"ranked": "ranked", "incomplete": "incomplete", "unresolved": "unresolved",
         "uncertain": "uncertain", "needs": "sil_needs", "warnings": "warnings"}


def walk(session: Session, study_id: int, name: str, **drawn: Any) -> list[Any]:
    """One list of the stored picture, page after page, joined."""
    found: list[Any] = []
    start = 0
    while True:
        page = read_stored_risk_page(session=session, study_id=study_id,
                                     starts={name: start}, **drawn)
        paged = (page.selection.scenarios if name == "cell" and page.selection
                 else getattr(page.picture, PAGED.get(name, name)))
        assert paged.start == start and paged.total >= len(found)
        found.extend(paged.items)
        if not paged.more:
            return found
        start = paged.end


def assert_same_picture(session: Session, study_id: int, *, withdrawn: bool,
                        most_likely_first: bool, cells: int = 100) -> None:
    drawn = {"withdrawn": withdrawn, "most_likely_first": most_likely_first}
    scratch: RiskPicture = build_risk_picture(load_study_tree(session, study_id), **drawn)
    page: StoredRiskPage = read_stored_risk_page(session=session, study_id=study_id, **drawn)
    stored = page.picture
    assert stored.matrix == scratch.matrix
    assert stored.category_sums == scratch.category_sums
    assert stored.node_sums == scratch.node_sums
    assert stored.sil_counts == scratch.sil_counts
    assert stored.left_out == scratch.left_out
    assert stored.gap_bars.ticks == scratch.gap_bars.ticks  # the whole study's axis
    assert [(b.label, b.value_text, b.width) for b in stored.gap_bars.bars] == [
        (b.label, b.value_text, b.width) for b in scratch.gap_bars.bars][:len(stored.ranked.items)]
    for name in PAGED:
        assert walk(session, study_id, name, **drawn) == list(getattr(scratch, PAGED[name]))
    fullest = sorted((c for c in scratch.matrix.cells if c.count), key=lambda c: -c.count)
    for cell in fullest[:cells]:
        listed = walk(session, study_id, "cell", cell=cell.key, **drawn)
        assert listed == list(select_cell(scratch, cell.key).scenarios)


DRAWINGS = [(False, False), (True, False), (False, True)]


@pytest.mark.parametrize(("withdrawn", "most_likely_first"), DRAWINGS)
def test_the_demo_picture_from_stored_rows_equals_the_computed_one(
    session: Session, monkeypatch: pytest.MonkeyPatch, withdrawn: bool, most_likely_first: bool
) -> None:
    study_id = load_demo_study(session).id or 0
    monkeypatch.setattr(stored_picture, "PAGE_SIZE", 3)  # every list spans pages
    assert_same_picture(session, study_id, withdrawn=withdrawn,
                        most_likely_first=most_likely_first)


def test_a_generated_study_picture_from_stored_rows_equals_the_computed_one(
    session: Session, monkeypatch: pytest.MonkeyPatch
) -> None:
    study_id = import_study_text(session, json.dumps(build_study(600, seed=7))).id or 0
    study = session.get(Study, study_id)
    assert study is not None
    read_stored_risk_page(session=session, study_id=study_id)  # stored rows built
    study.error_factor_default_ipl = 3.0  # every scenario's spread moves: all stale
    study.error_factor_default_initiating_event = 3.0
    session.add(study)
    session.commit()
    monkeypatch.setattr(stored_picture, "PAGE_SIZE", 250)
    page = read_stored_risk_page(session=session, study_id=study_id)
    assert page.picture.ranked.total == 600 and len(page.picture.ranked.items) == 250
    assert page.picture.uncertain.total > 0  # the defaults made some verdicts uncertain
    for withdrawn, most_likely_first in DRAWINGS:
        assert_same_picture(session, study_id, withdrawn=withdrawn,
                            most_likely_first=most_likely_first, cells=3)


def test_a_start_past_the_end_shows_the_last_page(session: Session,
                                                   monkeypatch: pytest.MonkeyPatch) -> None:
    study_id = load_demo_study(session).id or 0
    monkeypatch.setattr(stored_picture, "PAGE_SIZE", 3)
    whole = read_stored_risk_page(session=session, study_id=study_id).picture.ranked.total
    page = read_stored_risk_page(session=session, study_id=study_id,
                                 starts=dict.fromkeys(LISTS, 10_000)).picture.ranked
    assert page.start == (whole - 1) // 3 * 3 and page.end == whole and page.more == 0
