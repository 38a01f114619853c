"""The collector's full passes wait for an idle server: none while a request is in flight or
work keeps coming, one after IDLE_SECONDS of quiet (at most every EVERY_SECONDS), and one by
AT_LATEST_SECONDS whatever happens; the collector's own thresholds come back at the stop."""

import asyncio
import gc
from concurrent.futures import ThreadPoolExecutor

import pytest
from fastapi.testclient import TestClient

from app import idle_collection
from app.idle_collection import (
    AT_LATEST_SECONDS,
    EVERY_SECONDS,
    IDLE_SECONDS,
    OUT_OF_REACH,
    IdleCollector,
    collect_when_idle,
)


class Clock:
    def __init__(self) -> None:
        self.now = 1_000.0

    def __call__(self) -> float:
        return self.now


def collector_after_work() -> tuple[IdleCollector, Clock]:
    clock = Clock()
    collector = IdleCollector(clock)
    clock.now += EVERY_SECONDS
    collector.started()
    collector.finished()
    return collector, clock


def test_nothing_served_since_the_last_pass_needs_no_pass() -> None:
    clock = Clock()
    collector = IdleCollector(clock)
    clock.now += AT_LATEST_SECONDS * 2
    assert not collector.due()


def test_a_pass_waits_for_a_quiet_second_after_the_last_answer() -> None:
    collector, clock = collector_after_work()
    assert not collector.due()
    clock.now += IDLE_SECONDS
    assert collector.due()


def test_no_pass_while_a_request_is_in_flight_until_it_is_overdue() -> None:
    collector, clock = collector_after_work()
    collector.started()
    clock.now += IDLE_SECONDS * 10
    assert not collector.due()
    clock.now = collector.last_pass + AT_LATEST_SECONDS
    assert collector.due()


def test_passes_are_spaced_by_at_least_every_seconds() -> None:
    collector, clock = collector_after_work()
    clock.now += IDLE_SECONDS
    collector.run_pass()
    collector.started()
    collector.finished()
    clock.now += IDLE_SECONDS
    assert not collector.due()
    clock.now = collector.last_pass + EVERY_SECONDS
    assert collector.due()


def test_while_it_runs_the_collector_starts_no_full_pass_itself_and_restores_after() -> None:
    before = gc.get_threshold()

    async def run_briefly() -> tuple[int, int, int]:
        task = asyncio.create_task(collect_when_idle(IdleCollector()))
        await asyncio.sleep(0)
        during = gc.get_threshold()
        task.cancel()
        with pytest.raises(asyncio.CancelledError):
            await task
        return during

    # A thread of its own: in the whole suite the browser layer keeps a loop running here.
    with ThreadPoolExecutor(max_workers=1) as pool:
        during = pool.submit(asyncio.run, run_briefly()).result()
    assert during == (before[0], before[1], OUT_OF_REACH)
    assert gc.get_threshold() == before


def test_the_app_counts_each_request_in_flight_and_done(client: TestClient) -> None:
    seen = idle_collection.COLLECTOR
    seen.served_since_pass = False
    before = seen.last_activity
    assert client.get("/").status_code in (200, 303)
    assert seen.in_flight == 0
    assert seen.served_since_pass
    assert seen.last_activity >= before
