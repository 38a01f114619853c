"""A keystroke leaves nothing in the per-scenario caches: inside a request's block they
remember only until the block ends, and the edited scenario is still computed once."""

from fastapi.testclient import TestClient
from sqlmodel import Session

from app.services.exchange.exports import STUDY_SIZED_CACHES
from app.services.study.remembered import remembered, remembered_for_this_request
from tests.factories import make_scenario_tree, make_step
from tests.helpers import HX


def counting() -> tuple[list[int], object]:
    calls: list[int] = []

    @remembered(maxsize=16)
    def double(number: int) -> int:
        calls.append(number)
        return number * 2

    return calls, double


def test_outside_a_request_a_value_is_remembered_for_the_process() -> None:
    calls, double = counting()
    assert [double(3), double(3)] == [6, 6]  # type: ignore[operator]
    assert calls == [3]
    assert double.cache_info().currsize == 1  # type: ignore[attr-defined]


def test_inside_a_request_a_value_is_computed_once_and_forgotten_after() -> None:
    calls, double = counting()
    with remembered_for_this_request():
        assert [double(4), double(4)] == [8, 8]  # type: ignore[operator]
    assert calls == [4]
    assert double.cache_info().currsize == 0  # type: ignore[attr-defined]
    double(4)  # type: ignore[operator]
    assert calls == [4, 4]  # a new request, or none, computes it again


def test_clearing_forgets_the_process_wide_entries() -> None:
    _, double = counting()
    double(5)  # type: ignore[operator]
    double.cache_clear()  # type: ignore[attr-defined]
    assert double.cache_info().currsize == 0  # type: ignore[attr-defined]


def test_a_value_edit_adds_nothing_to_the_per_scenario_caches(client: TestClient,
                                                             session: Session) -> None:
    scenario = make_scenario_tree(session)
    step = make_step(session, scenario, value=0.1, value_text="1 in 10",
                     description="High level trip")
    for cache in STUDY_SIZED_CACHES:
        cache.cache_clear()
    for typed in ("1 in 20", "1 in 30", "0.04"):
        response = client.post(f"/studies/{step.study_id}/steps/{step.id}/value",
                                data={"value_text": typed}, headers=HX)
        assert response.status_code == 200
        assert "1 in 20" in response.text or typed != "1 in 20"
    assert [cache.cache_info().currsize for cache in STUDY_SIZED_CACHES] == [0, 0, 0, 0]
