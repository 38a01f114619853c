"""Failed join and sign-in attempts per client address, in a sliding window (in memory)."""

import threading
import time
from collections import defaultdict, deque

MAX_FAILURES = 5
WINDOW_SECONDS = 60.0


class FailureLimiter:
    """At most `max_failures` failed attempts per address within `window` seconds."""

    def __init__(self, max_failures: int = MAX_FAILURES, window: float = WINDOW_SECONDS) -> None:
        self.max_failures = max_failures
        self.window = window
        self._failures: dict[str, deque[float]] = defaultdict(deque)
        self._lock = threading.Lock()

    def _recent(self, address: str, now: float) -> deque[float]:
        times = self._failures[address]
        while times and now - times[0] >= self.window:
            times.popleft()
        return times

    def wait_seconds(self, address: str) -> int:
        """Seconds until `address` may try again (0: it may try now)."""
        now = time.monotonic()
        with self._lock:
            times = self._recent(address, now)
            if len(times) < self.max_failures:
                return 0
            return max(1, int(times[0] + self.window - now + 0.999))

    def record_failure(self, address: str) -> None:
        """Count one failed attempt from `address`."""
        with self._lock:
            self._recent(address, time.monotonic()).append(time.monotonic())
