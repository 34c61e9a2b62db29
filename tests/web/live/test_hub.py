"""The live feed's hub on its own, in one event loop: caps per key and in total, one store read
per session however many feeds, feeds that end when idle, and "gone" for a deleted session.

References: the WHATWG HTML standard's "Server-sent events" (event text), RFC 6585 §4 (429)
and RFC 9110 §15.6.4 (503), and counts made by hand.
"""

from __future__ import annotations

import asyncio
import json
import threading

import pytest

from rankscope.web.live.feed import FeedRefused, Hub


class Store:
    """A stand-in for the session store's stamp: (version, updated) or None once deleted;
    counts how often it is read."""

    def __init__(self) -> None:
        self.version: int | None = 0
        self.reads = 0
        self.lock = threading.Lock()

    def __call__(self, session_id: str) -> tuple[int, float] | None:
        with self.lock:
            self.reads += 1
        return None if self.version is None else (self.version, float(self.version))


def in_own_loop(coro):
    """asyncio.run on a thread of its own: the browser tests' sync Playwright leaves an event
    loop running in the main thread, where asyncio.run refuses to start."""
    out: dict = {}

    def go() -> None:
        try:
            out["value"] = asyncio.run(coro)
        except BaseException as exc:  # handed back to the test's thread
            out["error"] = exc

    t = threading.Thread(target=go)
    t.start()
    t.join()
    if "error" in out:
        raise out["error"]
    return out["value"]


def states(texts: list[str]) -> list[dict]:
    out = []
    for text in texts:
        lines = dict(line.split(": ", 1) for line in text.strip().splitlines()
                     if ": " in line)
        if lines.get("event") == "state":
            out.append(json.loads(lines["data"]))
    return out


async def collect(hub: Hub, ticket, into: list[str]) -> None:
    async for text in hub.feed(ticket):
        into.append(text)


def test_feeds_are_capped_per_key_and_in_total() -> None:
    hub = Hub(Store(), per_key=2, total=3)
    a1, a2 = hub.admit("s1", "key-a"), hub.admit("s1", "key-a")
    with pytest.raises(FeedRefused) as on_key:
        hub.admit("s2", "key-a")  # the key's cap counts every session it opens
    assert on_key.value.status == 429 and "2 live pages" in on_key.value.message
    hub.admit("s2", "key-b")
    with pytest.raises(FeedRefused) as on_server:
        hub.admit("s2", "key-c")
    assert on_server.value.status == 503 and "3 live pages" in on_server.value.message
    assert hub.viewers("s1") == 2 and hub.open_feeds() == 3
    a1.release()
    a1.release()  # given back once, however often it is called
    assert hub.viewers("s1") == 1 and hub.open_feeds() == 2
    hub.admit("s2", "key-c")
    a2.release()
    assert hub.viewers("s1") == 0


def test_feeds_take_half_of_the_connections_at_most() -> None:
    hub = Hub(Store(), per_key=128, total=1024)
    hub.bound_by(192)
    assert (hub.total, hub.per_key) == (96, 96)


def test_many_feeds_share_one_reader_and_all_hear_a_change() -> None:
    store = Store()
    n = 200

    async def run() -> list[list[str]]:
        hub = Hub(store, poll_seconds=0.5, per_key=n, total=n)
        heard: list[list[str]] = [[] for _ in range(n)]
        tasks = [asyncio.create_task(collect(hub, hub.admit("s", "k"), h)) for h in heard]
        await asyncio.sleep(1.2)
        reads = store.reads
        # By hand: 1.2 s at one read per 0.5 s, plus one for the joins: a handful, not n.
        assert reads <= 6, reads
        store.version = 1
        hub.notify("s")
        await asyncio.sleep(0.3)
        for t in tasks:
            t.cancel()
        await asyncio.gather(*tasks, return_exceptions=True)
        assert hub.open_feeds() == 0 and hub.viewers("s") == 0
        return heard

    heard = in_own_loop(run())
    for texts in heard:
        seen = states(texts)
        assert seen[-1]["version"] == 1 and seen[-1]["viewers"] == n
        assert texts[0].startswith("retry: ")


def test_a_quiet_feed_ends_and_a_deleted_session_says_gone() -> None:
    store = Store()

    async def run() -> tuple[list[str], list[str], float]:
        hub = Hub(store, poll_seconds=0.05, idle_seconds=0.3)
        quiet: list[str] = []
        start = asyncio.get_running_loop().time()
        await asyncio.wait_for(collect(hub, hub.admit("s", "k"), quiet), 5)
        took = asyncio.get_running_loop().time() - start
        doomed: list[str] = []
        task = asyncio.create_task(collect(hub, hub.admit("s", "k"), doomed))
        await asyncio.sleep(0.1)
        store.version = None
        hub.notify("s")
        await asyncio.wait_for(task, 5)
        return quiet, doomed, took

    quiet, doomed, took = in_own_loop(run())
    assert 0.3 <= took < 2 and states(quiet)[0]["version"] == 0
    assert doomed[-1].startswith("event: gone")
