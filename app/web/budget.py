"""The time budget of an analysis: run it on a bounded pool of workers, wait at most N seconds.

Threads cannot be stopped, so an analysis past its budget runs on and its result is kept for
the retry; the request answers at once with AnalysisTooSlow. No analysis code here.
"""

from __future__ import annotations

import threading
from collections.abc import Callable, Hashable
from concurrent.futures import Future, ThreadPoolExecutor
from concurrent.futures import TimeoutError as FutureTimeout
from typing import TypeVar

T = TypeVar("T")

#: One pool per size, shared by every app in the process: the bound is on the machine's
#: cores, and tests that build many apps do not pile up idle threads.
_POOLS: dict[int, ThreadPoolExecutor] = {}
_POOLS_GUARD = threading.Lock()


class AnalysisTooSlow(Exception):
    """An analysis did not finish within the budget; it goes on, and nothing was saved."""

    def __init__(self, seconds: float) -> None:
        self.seconds = seconds
        super().__init__(self.message)

    @property
    def message(self) -> str:
        return (f"The analysis took longer than {self.seconds:g} s, so this request stopped "
                "waiting. Nothing was saved or lost: the session is as it was before. The "
                "analysis goes on in the background; try again in a little while and it will "
                "answer at once. For tables this large, use `rankscope check FILE --stream`, "
                "or start the server with a longer --time-budget")


def pool(workers: int) -> ThreadPoolExecutor:
    with _POOLS_GUARD:
        if workers not in _POOLS:
            _POOLS[workers] = ThreadPoolExecutor(workers, thread_name_prefix="rankscope-analysis")
        return _POOLS[workers]


class Budget:
    """Runs analyses on a pool of `workers` threads and waits `seconds` for each (None:
    without a limit). A request for an analysis already running waits for that one."""

    def __init__(self, seconds: float | None = None, workers: int = 2) -> None:
        self.seconds = seconds
        self._pool = pool(workers)
        self._running: dict[Hashable, Future] = {}
        self._guard = threading.Lock()

    def run(self, key: Hashable, work: Callable[[], T], keep: Callable[[T], None]) -> T:
        """work()'s result, or AnalysisTooSlow after the budget. keep(result) runs as soon as
        work succeeds, whether or not anyone still waits (so the retry finds it)."""
        with self._guard:
            future = self._running.get(key)
            if future is None:
                future = self._pool.submit(self._done_with, key, work, keep)
                self._running[key] = future
        try:
            return future.result(timeout=self.seconds)
        except FutureTimeout:
            raise AnalysisTooSlow(self.seconds or 0.0) from None

    def _done_with(self, key: Hashable, work: Callable[[], T], keep: Callable[[T], None]) -> T:
        try:
            result = work()
            keep(result)  # before the key is released, so no caller misses both
            return result
        finally:
            with self._guard:
                self._running.pop(key, None)
