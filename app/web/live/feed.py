"""Live sessions: who is watching which session, and the server-sent event feed each page reads.

Announces versions and viewer counts only (pages fetch the fresh view themselves); no rendering.
"""

from __future__ import annotations

import asyncio
import json
import threading
import time
from collections import Counter
from collections.abc import AsyncIterator, Callable
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
#: A feed with nothing new to say for this long ends too (the browser reconnects), so a page
#: left open somewhere does not hold a connection for good.
IDLE_SECONDS = 120.0
#: What the browser waits before reconnecting (the SSE "retry" field, in milliseconds).
RETRY_MS = 1000
#: Pause after a wake-up before the session is read again, so a burst of pages opening (or
#: of changes) is one read and one event, not one per page.
GATHER_SECONDS = 0.05
#: Most feeds open at once on one key (a link's token, or the owner's) and on the server. A
#: page holds one feed; a view link handed to a team opens one per person and tab.
FEEDS_PER_KEY = 128
FEEDS_TOTAL = 1024

TOO_MANY_ON_KEY = ("This link already has {n} live pages open, the most one link may have. "
                   "Close some of them; this page still works but will not update by itself "
                   "until then (reload it to see the latest).")
TOO_MANY_ON_SERVER = ("This server already has {n} live pages open, the most it keeps. This "
                      "page still works but will not update by itself until some close "
                      "(reload it to see the latest).")


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


class FeedRefused(Exception):
    """No more feeds for this key or on this server: status 429 or 503 and a message."""

    def __init__(self, status: int, message: str) -> None:
        super().__init__(message)
        self.status, self.message = status, message


class _Channel:
    """One session's announcements on one event loop: the store is read once per change or
    poll and the event written for all of that session's feeds, which only wait for it."""

    def __init__(self, hub: Hub, session_id: str) -> None:
        self.hub, self.session_id = hub, session_id
        self.loop = asyncio.get_running_loop()
        self.feeds = 0
        self.message = ""
        self.serial = 0  # how many events were published
        self.ended = False  # "gone" was published: feeds stop after it
        self.published = asyncio.Event()
        self.wake = asyncio.Event()
        self.task: asyncio.Task | None = None

    def publish(self, message: str) -> None:
        self.message, self.serial = message, self.serial + 1
        done, self.published = self.published, asyncio.Event()
        done.set()  # feeds waiting on the old event go on; later ones wait on the new

    async def run(self) -> None:
        last: tuple[str, int] | None = None
        try:
            while self.feeds:
                # Cleared before reading, so a change made while reading wakes the next wait.
                self.wake.clear()
                stamp = await anyio.to_thread.run_sync(self.hub.stamp, self.session_id)
                if stamp is None:
                    self.ended = True
                    self.publish(sse("gone", {"session": self.session_id}))
                    return
                now = (revision(stamp), self.hub.viewers(self.session_id))
                if now != last:
                    self.publish(sse("state", {"version": stamp[0], "revision": now[0],
                                               "viewers": now[1]}, str(stamp[0])))
                    last = now
                with anyio.move_on_after(self.hub.poll_seconds):
                    await self.wake.wait()
                # Pages that open (or changes that come) together are read as one.
                await asyncio.sleep(GATHER_SECONDS)
        finally:
            self.hub._ended(self)


class Ticket:
    """A feed let in: its place in the counts, given back once (release) however it ends."""

    def __init__(self, hub: Hub, session_id: str, key: str) -> None:
        self.hub, self.session_id, self.key = hub, session_id, key
        self.open = True

    def release(self) -> None:
        if self.open:
            self.open = False
            self.hub._release(self)


class Hub:
    """Open feeds per session, within caps per key and in total. notify() may be called from
    any thread (routes run in a thread pool); it wakes that session's reader, which reads
    the store's stamp once for all of the session's feeds."""

    def __init__(self, stamp: Callable[[str], tuple[int, float] | None], *,
                 poll_seconds: float = POLL_SECONDS, feed_seconds: float = FEED_SECONDS,
                 idle_seconds: float = IDLE_SECONDS, per_key: int = FEEDS_PER_KEY,
                 total: int = FEEDS_TOTAL) -> None:
        self._stamp = stamp
        self.poll_seconds = poll_seconds
        self.feed_seconds = feed_seconds
        self.idle_seconds = idle_seconds
        self.per_key, self.total = per_key, total
        self._channels: dict[tuple[str, asyncio.AbstractEventLoop], _Channel] = {}
        self._viewers: Counter[str] = Counter()
        self._keys: Counter[str] = Counter()
        self._open = 0
        self._guard = threading.Lock()

    def bound_by(self, connections: int) -> None:
        """Keep feeds to half of the connections the server holds, so that feeds (which
        are never closed to make room) leave room for everything else."""
        self.total = max(1, min(self.total, connections // 2))
        self.per_key = min(self.per_key, self.total)

    def viewers(self, session_id: str) -> int:
        with self._guard:
            return self._viewers[session_id]

    def open_feeds(self) -> int:
        with self._guard:
            return self._open

    def notify(self, session_id: str) -> None:
        """Something about the session changed (or someone came or went)."""
        with self._guard:
            channels = [c for (sid, _), c in self._channels.items() if sid == session_id]
        for c in channels:
            try:
                c.loop.call_soon_threadsafe(c.wake.set)
            except RuntimeError:  # its loop has closed: the feeds are gone anyway
                pass

    def stamp(self, session_id: str) -> tuple[int, float] | None:
        return self._stamp(session_id)

    def admit(self, session_id: str, key: str) -> Ticket:
        """A place for one more feed of session_id opened with key (a link's token, or the
        owner's); FeedRefused when the key or the server has as many as allowed."""
        with self._guard:
            if self._keys[key] >= self.per_key:
                raise FeedRefused(429, TOO_MANY_ON_KEY.format(n=self.per_key))
            if self._open >= self.total:
                raise FeedRefused(503, TOO_MANY_ON_SERVER.format(n=self.total))
            self._keys[key] += 1
            self._viewers[session_id] += 1
            self._open += 1
        return Ticket(self, session_id, key)

    def _release(self, ticket: Ticket) -> None:
        with self._guard:
            for counts, name in ((self._keys, ticket.key), (self._viewers, ticket.session_id)):
                counts[name] -= 1
                if counts[name] <= 0:
                    del counts[name]
            self._open -= 1
        self.notify(ticket.session_id)

    def _channel(self, session_id: str) -> _Channel:
        where = (session_id, asyncio.get_running_loop())
        with self._guard:
            channel = self._channels.get(where)
            if channel is None:
                channel = self._channels[where] = _Channel(self, session_id)
        if channel.task is None:
            channel.task = channel.loop.create_task(channel.run())
        return channel

    def _ended(self, channel: _Channel) -> None:
        with self._guard:
            where = (channel.session_id, channel.loop)
            if self._channels.get(where) is channel:
                del self._channels[where]

    async def feed(self, ticket: Ticket) -> AsyncIterator[str]:
        """The event stream of one page: a "state" event (version, revision, viewers) at
        once and on every change, "gone" when the session is deleted. It ends after
        idle_seconds without news or feed_seconds in all; the browser then reconnects."""
        channel = self._channel(ticket.session_id)
        channel.feeds += 1
        self.notify(ticket.session_id)  # the others hear of one more viewer
        try:
            yield f"retry: {RETRY_MS}\n\n"
            seen = 0
            started = news = quiet = time.monotonic()
            while True:
                now = time.monotonic()
                if channel.serial != seen:
                    seen = channel.serial
                    yield channel.message
                    if channel.ended:
                        return
                    news = quiet = now
                elif now - quiet > KEEPALIVE_SECONDS:
                    yield ": still here\n\n"
                    quiet = now
                left = min(started + self.feed_seconds, news + self.idle_seconds) - now
                if left <= 0:
                    return
                published = channel.published
                with anyio.move_on_after(min(left, KEEPALIVE_SECONDS)):
                    await published.wait()
        finally:
            channel.feeds -= 1
            channel.wake.set()
            ticket.release()
