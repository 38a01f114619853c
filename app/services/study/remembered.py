"""Per-scenario caches that a keystroke does not fill.

The study's per-scenario caches (`results.assess`, `results.compute_cached`, the row-tuple
assessment, the spread's lines) remember a scenario by its numbers, so a page showing many
scenarios recomputes only those whose numbers changed. A keystroke brings a new set of numbers
each time. Remembered for the whole process, each edit left a few dozen objects behind (steps,
ladders, spreads, rows); the cycle collector counts every object that survives, and once they
were a quarter of the rest it walked the whole heap: every ~150 edits, an edit took 13-25 ms
more, growing with the caches (measured on a 1,000-scenario study: the edit's p99).

Inside `remembered_for_this_request()`, these caches keep what they compute in a dict that
goes with the request instead: the refresh of the stored row and the redrawn reply still
compute the edited scenario once, and nothing of it outlives the request.
"""

from collections.abc import Callable, Hashable, Iterator
from contextlib import contextmanager
from contextvars import ContextVar
from functools import _CacheInfo, lru_cache, update_wrapper
from typing import Any, Generic, ParamSpec, TypeVar

P = ParamSpec("P")
R = TypeVar("R")

_REQUEST_MEMO: ContextVar[dict[Hashable, Any] | None] = ContextVar("request_memo",
                                                                   default=None)


class Remembered(Generic[P, R]):
    """`function` remembered for the process (an LRU cache of `maxsize` entries), or only for
    the request inside `remembered_for_this_request()`."""

    def __init__(self, function: Callable[P, R], maxsize: int) -> None:
        self._function = function
        self._cache = lru_cache(maxsize=maxsize)(function)
        self._shared: Callable[P, R] = self._cache  # the same cache, called as `function` is
        update_wrapper(self, function)

    def __call__(self, *args: P.args, **kwargs: P.kwargs) -> R:
        memo = _REQUEST_MEMO.get()
        if memo is None:
            return self._shared(*args, **kwargs)
        key = (self._function, args, tuple(sorted(kwargs.items())))
        try:
            found: R = memo[key]
        except KeyError:
            found = memo[key] = self._function(*args, **kwargs)
        return found

    def cache_clear(self) -> None:
        """Forget every process-wide entry."""
        self._cache.cache_clear()

    def cache_info(self) -> _CacheInfo:
        """The process-wide cache's hits, misses and size."""
        return self._cache.cache_info()


def remembered(maxsize: int) -> Callable[[Callable[P, R]], Remembered[P, R]]:
    """Decorator form of Remembered."""
    def wrap(function: Callable[P, R]) -> Remembered[P, R]:
        return Remembered(function, maxsize)
    return wrap


@contextmanager
def remembered_for_this_request() -> Iterator[None]:
    """Within the block, the per-scenario caches remember only until the block ends."""
    token = _REQUEST_MEMO.set({})
    try:
        yield
    finally:
        _REQUEST_MEMO.reset(token)


def remembering_per_request(function: Callable[P, R]) -> Callable[P, R]:
    """`function` run inside `remembered_for_this_request()` (a keystroke's service)."""
    def run(*args: P.args, **kwargs: P.kwargs) -> R:
        with remembered_for_this_request():
            return function(*args, **kwargs)
    return update_wrapper(run, function)
