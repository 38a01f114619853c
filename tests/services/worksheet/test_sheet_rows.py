"""How much of a large node the first paint draws, and that its work does not grow with the
node (services/worksheet/sheet_rows.py)."""

from types import SimpleNamespace
from typing import Any

import pytest
from sqlmodel import Session

from app.db.models import Deviation, Node, Scenario, Step
from app.likelihood.types import StepKind
from app.services.worksheet import page as page_service
from app.services.worksheet.sheet_rows import (
    FIRST_PAINT_ROWS,
    NodeOutline,
    more_rows,
    rows_to_draw,
)
from tests.factories import first_category, make_deviation, make_node, make_study


def outline_of(*sizes: int) -> NodeOutline:
    """An outline of deviations 1, 2, … holding `sizes` scenarios (ids 100 · deviation + n)."""
    deviations = [Deviation(id=d, node_id=1, study_id=1) for d in range(1, len(sizes) + 1)]
    scenarios = {d: [SimpleNamespace(id=100 * d + n) for n in range(1, size + 1)]
                 for d, size in zip(range(1, len(sizes) + 1), sizes, strict=True)}
    return NodeOutline(deviations, scenarios)  # type: ignore[arg-type]


def test_the_first_paint_spends_its_budget_in_worksheet_order() -> None:
    assert FIRST_PAINT_ROWS == 40
    assert rows_to_draw(outline_of(25, 25, 25), set()) == {1: 25, 2: 15, 3: 0}
    assert rows_to_draw(outline_of(100, 3), set()) == {1: 40, 2: 0}


def test_a_deviation_holding_a_scenario_worked_on_is_drawn_down_to_it() -> None:
    assert rows_to_draw(outline_of(25, 25, 25), {312}) == {1: 25, 2: 15, 3: 12}
    assert rows_to_draw(outline_of(100, 3), {188, 201}) == {1: 88, 2: 1}


def test_the_line_for_the_rest_names_the_next_part_and_how_many_remain() -> None:
    rest = more_rows(7, "2.3", total=130, drawn=40)
    assert rest is not None
    assert (rest.start, rest.remaining, rest.first_number, rest.last_number) == (
        40, 90, "2.3.41", "2.3.90")
    assert more_rows(7, "2.3", total=40, drawn=40) is None


def node_of(session: Session, scenarios: int) -> Node:
    """One deviation of `scenarios` scenarios, each with an initiating event and an IPL."""
    study = make_study(session)
    node = make_node(session, study)
    deviation = make_deviation(session, node)
    category = first_category(session, study)
    for position in range(scenarios):
        scenario = Scenario(study_id=study.id, deviation_id=deviation.id, position=position,
                            cause=f"Cause {position}", severity_category_id=category.id)
        session.add(scenario)
        session.flush()
        session.add_all([Step(study_id=study.id, scenario_id=scenario.id, value=0.1,
                              kind=StepKind.INITIATING_EVENT, position=0),
                         Step(study_id=study.id, scenario_id=scenario.id, value=0.1,
                              kind=StepKind.IPL, position=10)])
    session.commit()
    return node


@pytest.mark.parametrize("scenarios", [60, 240])
def test_the_first_paint_computes_the_same_scenarios_however_large_the_node(
    session: Session, monkeypatch: pytest.MonkeyPatch, scenarios: int
) -> None:
    computed: list[int] = []
    slim = page_service.slim_scenarios

    def counted(session: Session, study_id: int, numbered: Any, categories: Any) -> Any:
        computed.append(len(numbered))
        return slim(session, study_id, numbered, categories)

    monkeypatch.setattr(page_service, "slim_scenarios", counted)
    node = node_of(session, scenarios)
    page = page_service.build_worksheet_page(session=session, study_id=node.study_id,
                                             node_id=node.id or 0)
    assert computed == [FIRST_PAINT_ROWS]
    [deviation] = page.deviations
    assert len(deviation.scenarios) == FIRST_PAINT_ROWS
    assert deviation.more is not None and deviation.more.remaining == scenarios - 40
