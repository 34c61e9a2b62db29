"""Live sessions: who is watching which session, and the server-sent event feed each page reads.

Announces versions and viewer counts only (pages fetch the fresh view themselves); no rendering.
"""

from __future__ import annotations

import asyncio
import json
import threading
import time
from collections.abc import AsyncIterator, Callable
from dataclasses import dataclass, field
from typing import Any

import anyio

#: How often a feed looks at the database even when nothing in this process said so
#: (another rankscope process may share the data folder): the "within a second" promise.
POLL_SECONDS = 0.5
#: A comment line this often keeps proxies from closing a quiet feed and reveals a
#: departed viewer on servers that only notice a closed socket when writing.
KEEPALIVE_SECONDS = 15.0
#: A feed ends after this long and the browser reconnects (EventSource does so by itself),
#: so no connection is held forever and a stopping server is never kept waiting long.
FEED_SECONDS = 300.0
#: What the browser waits before reconnecting (the SSE "retry" field, in milliseconds).
RETRY_MS = 1000


def sse(event: str, data: dict[str, Any], event_id: str | None = None) -> str:
    """One event in the text/event-stream format (WHATWG HTML, "Server-sent events"):
    event and data fields, an optional id, ended by a blank line. json.dumps writes no line
    breaks, so the data is one data line."""
    lines = [f"event: {event}", f"data: {json.dumps(data, separators=(',', ':'))}"]
    if event_id is not None:
        lines.append(f"id: {event_id}")
    return "\n".join(lines) + "\n\n"


def revision(stamp: tuple[int, float]) -> str:
    """The same text as Session.revision, from a store stamp (version, updated)."""
    return f"{stamp[0]}-{round(stamp[1] * 1e6)}"


@dataclass(eq=False)
class _Watcher:
    loop: asyncio.AbstractEventLoop
    wake: asyncio.Event = field(default_factory=asyncio.Event)


class Hub:
    """Open feeds per session. notify() may be called from any thread (routes run in a
    thread pool); it wakes that session's feeds, which then read the store's stamp."""

    def __init__(self, stamp: Callable[[str], tuple[int, float] | None], *,
                 poll_seconds: float = POLL_SECONDS, feed_seconds: float = FEED_SECONDS
                 ) -> None:
        self._stamp = stamp
        self.poll_seconds = poll_seconds
        self.feed_seconds = feed_seconds
        self._watchers: dict[str, set[_Watcher]] = {}
        self._guard = threading.Lock()

    def viewers(self, session_id: str) -> int:
        with self._guard:
            return len(self._watchers.get(session_id, ()))

    def notify(self, session_id: str) -> None:
        """Something about the session changed (or someone came or went)."""
        with self._guard:
            watchers = list(self._watchers.get(session_id, ()))
        for w in watchers:
            try:
                w.loop.call_soon_threadsafe(w.wake.set)
            except RuntimeError:  # its loop has closed: the feed is gone anyway
                pass

    def stamp(self, session_id: str) -> tuple[int, float] | None:
        return self._stamp(session_id)

    def _join(self, session_id: str) -> _Watcher:
        watcher = _Watcher(asyncio.get_running_loop())
        with self._guard:
            self._watchers.setdefault(session_id, set()).add(watcher)
        self.notify(session_id)
        return watcher

    def _leave(self, session_id: str, watcher: _Watcher) -> None:
        with self._guard:
            left = self._watchers.get(session_id, set())
            left.discard(watcher)
            if not left:
                self._watchers.pop(session_id, None)
        self.notify(session_id)

    async def feed(self, session_id: str) -> AsyncIterator[str]:
        """The event stream of one page: a "state" event (version, revision, viewers) at
        once and on every change, "gone" when the session is deleted."""
        watcher = self._join(session_id)
        try:
            yield f"retry: {RETRY_MS}\n\n"
            last: tuple[str, int] | None = None
            started = quiet_since = time.monotonic()
            while time.monotonic() - started < self.feed_seconds:
                # Cleared before reading, so a change made while reading wakes the next wait.
                watcher.wake.clear()
                stamp = await anyio.to_thread.run_sync(self._stamp, session_id)
                if stamp is None:
                    yield sse("gone", {"session": session_id})
                    return
                now = (revision(stamp), self.viewers(session_id))
                if now != last:
                    yield sse("state", {"version": stamp[0], "revision": now[0],
                                        "viewers": now[1]}, str(stamp[0]))
                    last, quiet_since = now, time.monotonic()
                elif time.monotonic() - quiet_since > KEEPALIVE_SECONDS:
                    yield ": still here\n\n"
                    quiet_since = time.monotonic()
                with anyio.move_on_after(self.poll_seconds):
                    await watcher.wake.wait()
        finally:
            self._leave(session_id, watcher)
