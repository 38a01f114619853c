"""The cycle collector's full passes run while the server is idle, not inside a request.

A full pass walks every object that has outlived two younger passes; the start's objects are
frozen out of it (`lifecycle.warm_up`), but what the first requests build (compiled SQL, the
per-scenario caches) stays in. CPython starts a full pass by itself once objects promoted
since the last one reach a quarter of the rest: on a 1,000-scenario study every ~150 edits,
inside whichever request was running, 13-25 ms longer each time (the edit's p99).

While the server runs, the automatic full pass is switched off (the collector's third
threshold set out of reach; the two younger passes run as before) and `IdleCollector` runs
one when no request has been in flight for IDLE_SECONDS, at most every EVERY_SECONDS; a
server never idle that long still gets one every AT_LATEST_SECONDS, so cyclic garbage is
bounded either way.
"""

import asyncio
import gc
import time
from collections.abc import Awaitable, Callable, MutableMapping
from typing import Any

IDLE_SECONDS = 1.0
EVERY_SECONDS = 30.0
AT_LATEST_SECONDS = 300.0
CHECK_SECONDS = 0.5
OUT_OF_REACH = 1_000_000_000  # third threshold: no full pass started by the collector itself

Scope = MutableMapping[str, Any]
Message = MutableMapping[str, Any]
Receive = Callable[[], Awaitable[Message]]
Send = Callable[[Message], Awaitable[None]]
App = Callable[[Scope, Receive, Send], Awaitable[None]]


class IdleCollector:
    """Counts requests in flight and says when a full pass may run."""

    def __init__(self, clock: Callable[[], float] = time.monotonic) -> None:
        self.clock = clock
        self.in_flight = 0
        self.last_activity = clock()
        self.last_pass = clock()
        self.served_since_pass = False

    def started(self) -> None:
        """A request came in."""
        self.in_flight += 1
        self.served_since_pass = True
        self.last_activity = self.clock()

    def finished(self) -> None:
        """A request's answer was sent (or it failed)."""
        self.in_flight -= 1
        self.last_activity = self.clock()

    def due(self) -> bool:
        """Whether to run a full pass now: idle long enough after some work, or overdue."""
        now = self.clock()
        if not self.served_since_pass:
            return False
        if now - self.last_pass >= AT_LATEST_SECONDS:
            return True
        idle = self.in_flight == 0 and now - self.last_activity >= IDLE_SECONDS
        return idle and now - self.last_pass >= EVERY_SECONDS

    def run_pass(self) -> int:
        """One full pass; how many unreachable objects it found."""
        self.last_pass = self.clock()
        self.served_since_pass = False
        return gc.collect()


COLLECTOR = IdleCollector()


class ActivityTracker:
    """ASGI middleware: tells the collector when each HTTP request starts and ends."""

    def __init__(self, app: App, collector: IdleCollector = COLLECTOR) -> None:
        self.app = app
        self.collector = collector

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        self.collector.started()
        try:
            await self.app(scope, receive, send)
        finally:
            self.collector.finished()


async def collect_when_idle(collector: IdleCollector = COLLECTOR) -> None:
    """Run full passes only when due, until cancelled; the collector's own full passes are
    off meanwhile and come back on the way out."""
    first, second, third = gc.get_threshold()
    gc.set_threshold(first, second, OUT_OF_REACH)
    try:
        while True:
            await asyncio.sleep(CHECK_SECONDS)
            if collector.due():
                collector.run_pass()
    finally:
        gc.set_threshold(first, second, third)
