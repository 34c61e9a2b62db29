"""The page's live feed in Chromium when the server ends or refuses it: a feed the server ends
for being quiet is reopened by the browser and the page stays live; a feed refused for too
many open pages (429) is tried again by the page's script, and the page is live once room is
made.

References: the WHATWG HTML standard's "Server-sent events" (a stream that ends is reopened
after its retry time; a refusal with a status is not, so the script must), RFC 6585 §4 (429),
and the viewer counts the server reports.
"""

from __future__ import annotations

import socket
import threading
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager

import httpx
import pytest
import uvicorn

from rankscope.web.app import create_app
from rankscope.web.live.feed import FeedRefused
from tests.web.conftest import to_csv, units_table

#: What the page's script waits before its first try after a refusal (static/live.js),
#: plus its randomness and time to draw on a loaded machine.
RETRY_MS = 5000 + 1000 + 10_000
#: Longest wait for a page to show what the server said (a loaded machine).
WAIT_MS = 20_000


class Admissions:
    """The hub's answers to feeds as they come: 200 for a feed let in, else the refusal's
    status (429, 503). Counted on the server, since a browser may reopen a feed unseen."""

    def __init__(self, hub) -> None:
        self.statuses: list[int] = []
        admit = hub.admit

        def counted(*args: object):
            try:
                ticket = admit(*args)
            except FeedRefused as refused:
                self.statuses.append(refused.status)
                raise
            self.statuses.append(200)
            return ticket

        hub.admit = counted


@contextmanager
def server(**hub_settings: float) -> Iterator[tuple[str, Admissions]]:
    """A rankscope app on a free loopback port in a thread, with these settings of its live
    hub; its address and the hub's answers to feeds."""
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    app = create_app()
    for name, value in hub_settings.items():
        setattr(app.state.live, name, value)
    admissions = Admissions(app.state.live)
    srv = uvicorn.Server(uvicorn.Config(app, host="127.0.0.1", port=port, log_level="warning",
                                        timeout_graceful_shutdown=1))
    thread = threading.Thread(target=srv.run, daemon=True)
    thread.start()
    deadline = time.monotonic() + 20
    while not srv.started:
        assert time.monotonic() < deadline and thread.is_alive(), "the server did not start"
        time.sleep(0.05)
    try:
        yield f"http://127.0.0.1:{port}", admissions
    finally:
        srv.should_exit = True
        thread.join(10)


def session(url: str) -> str:
    r = httpx.post(f"{url}/api/upload", timeout=20,
                   files={"file": ("units.csv", to_csv(units_table()), "text/csv")})
    assert r.status_code == 201, r.text
    return r.json()["session"]


def live_count(page, n: int, timeout: int = WAIT_MS) -> None:
    page.wait_for_function(
        "(n) => { const v = document.getElementById('viewers'); return !v.hidden && "
        "!v.classList.contains('offline') && "
        "document.getElementById('viewer-count').textContent === String(n); }",
        arg=n, timeout=timeout)


@pytest.fixture()
def pages(browser) -> Iterator[Callable]:
    contexts = []

    def open_page(url: str):
        context = browser.new_context(base_url=url)
        contexts.append(context)
        page = context.new_page()
        page.set_default_timeout(30_000)
        return page

    yield open_page
    for context in contexts:
        context.close()


def first_page(pages: Callable, url: str) -> tuple[str, object]:
    """A new session and one page on it, live."""
    sid = session(url)
    page = pages(url)
    page.goto(f"/s/{sid}")
    live_count(page, 1)
    return sid, page


def test_a_feed_ended_for_quiet_is_reopened_and_stays_live(pages) -> None:
    with server(idle_seconds=1.0) as (url, seen):
        sid, one = first_page(pages, url)
        # The server ends the quiet feed every second; the browser reopens it each time.
        deadline = time.monotonic() + WAIT_MS / 1000
        while len(seen.statuses) < 3 and time.monotonic() < deadline:
            time.sleep(0.2)
        assert len(seen.statuses) >= 3 and set(seen.statuses) == {200}, seen.statuses
        two = pages(url)
        two.goto(f"/s/{sid}")
        live_count(one, 2)  # the reopened feed still tells the first page of the second
        live_count(two, 2)


def test_a_refused_feed_is_tried_again_until_there_is_room(pages) -> None:
    # Here every page is the owner's, so one key: one feed at a time.
    with server(per_key=1) as (url, seen):
        sid, first = first_page(pages, url)
        second = pages(url)
        second.goto(f"/s/{sid}")
        second.wait_for_function("() => document.getElementById('viewers')"
                                 ".classList.contains('offline') || "
                                 "document.getElementById('viewers').hidden")
        assert seen.statuses == [200, 429]
        first.close()  # its feed goes, and with it the key's one place
        live_count(second, 1, timeout=RETRY_MS)
        assert seen.statuses[-1] == 200
