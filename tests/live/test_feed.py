"""The live feed of a session on a real server: server-sent events that announce each new
version within a second, count the pages watching, and say when the session is deleted.

References: the WHATWG HTML standard's "Server-sent events" (the text/event-stream format and
how a client parses it), RFC 9110 for status codes, and the versions the server acknowledged.
"""

from __future__ import annotations

import json
import queue
import socket
import threading
import time

import httpx

from tests.live.conftest import upload
from tests.web.conftest import to_csv, units_table

#: The promise: everyone sees a change within a second.
WITHIN = 1.0


class Feed:
    """Reads one event stream in a thread, parsed as the WHATWG standard says a browser
    does: "field: value" lines (one leading space dropped), ":" lines are comments, a blank
    line dispatches the event."""

    def __init__(self, url: str) -> None:
        self.events: queue.Queue = queue.Queue()
        self.client = httpx.Client(timeout=httpx.Timeout(10, read=30))
        self.headers: dict[str, str] = {}
        self.ready = threading.Event()
        self._stream = self.client.stream("GET", url)
        threading.Thread(target=self._read, daemon=True).start()
        assert self.ready.wait(10), "the feed did not answer"

    def _read(self) -> None:
        try:
            with self._stream as r:
                self._response = r
                self.status = r.status_code
                self.headers = dict(r.headers)
                self.ready.set()
                event: dict[str, str] = {}
                for line in r.iter_lines():
                    if line == "":
                        if event:
                            self.events.put((time.monotonic(), event))
                        event = {}
                    elif line.startswith(":"):
                        continue
                    else:
                        name, _, value = line.partition(":")
                        value = value[1:] if value.startswith(" ") else value
                        if name == "data" and "data" in event:
                            value = event["data"] + "\n" + value  # data lines join
                        event[name] = value
        except (httpx.TransportError, httpx.StreamClosed, RuntimeError):
            pass
        finally:
            self.ready.set()
            self.events.put((time.monotonic(), {"closed": "yes"}))

    def next(self, where, timeout: float = 10.0) -> tuple[float, dict]:
        """The next event matching where(event), waiting at most timeout seconds."""
        deadline = time.monotonic() + timeout
        while True:
            left = deadline - time.monotonic()
            assert left > 0, "no such event in time"
            at, event = self.events.get(timeout=left)
            if where(event):
                return at, event

    def close(self) -> None:
        """End the connection as a closed browser tab does. httpx cannot close a stream
        that another thread is reading, so the socket itself is shut down."""
        stream = self._response.extensions.get("network_stream")
        sock = stream.get_extra_info("socket") if stream is not None else None
        if sock is not None:
            try:
                sock.shutdown(socket.SHUT_RDWR)
            except OSError:
                pass
        self.client.close()


def state(event: dict) -> dict | None:
    return json.loads(event["data"]) if event.get("event") == "state" else None


def test_feed_announces_changes_viewers_and_deletion(serve) -> None:
    server = serve()
    client = httpx.Client(base_url=server.url, timeout=10)
    sid = upload(client, "units.csv", to_csv(units_table()))
    url = f"{server.url}/api/s/{sid}/events"
    feeds: list[Feed] = []
    try:
        one = Feed(url)
        feeds.append(one)
        # Reference: the WHATWG standard's media type for an event stream (RFC 9110 §15.3.1).
        assert one.status == 200
        assert one.headers["content-type"].startswith("text/event-stream")
        _, first = one.next(lambda e: "retry" in e or e.get("event") == "state")
        if "retry" in first:
            assert int(first["retry"]) > 0
            _, first = one.next(lambda e: e.get("event") == "state")
        s = state(first)
        assert s["version"] == 0 and s["viewers"] == 1 and first["id"] == "0"

        two = Feed(url)
        feeds.append(two)
        _, e = one.next(lambda e: e.get("event") == "state" and state(e)["viewers"] == 2)
        _, e = two.next(lambda e: e.get("event") == "state" and state(e)["viewers"] == 2)

        for n, column in enumerate(("temp_f", "mass_kg", "hours"), start=1):
            sent = time.monotonic()
            r = client.post(f"/api/s/{sid}/changes?html=0", json={
                "kind": "step", "payload": {"step": "drop", "column": column},
                "base_version": n - 1, "change_id": f"f-{n}"})
            assert r.status_code == 200
            saved = r.json()["saved_as"]  # reference: the version the server acknowledged
            for feed in (one, two):
                at, e = feed.next(lambda e, v=saved: e.get("event") == "state"
                                  and state(e)["version"] == v)
                assert at - sent < WITHIN, f"seen after {at - sent:.2f} s"
                assert state(e)["revision"].startswith(f"{saved}-")

        # A pin changes no version, but the revision moves so pages refresh.
        before = state(e)["revision"]
        step_r = client.post(f"/api/s/{sid}/changes", json={
            "kind": "step", "payload": {"step": "response", "column": "load"}})
        assert step_r.status_code == 200
        assert client.post(f"/api/s/{sid}/pins", json={}).status_code == 201
        one.next(lambda e: e.get("event") == "state" and state(e)["revision"] != before
                 and state(e)["version"] == 4)

        two.close()
        feeds.remove(two)
        one.next(lambda e: e.get("event") == "state" and state(e)["viewers"] == 1)

        assert client.delete(f"/api/s/{sid}").status_code == 200
        one.next(lambda e: e.get("event") == "gone")
        one.next(lambda e: "closed" in e)  # the stream ends after saying so
        # A feed for a session that is no more: 404 (RFC 9110 §15.5.5), not a stream.
        assert client.get(f"/api/s/{sid}/events").status_code == 404
    finally:
        for feed in feeds:
            feed.close()
        client.close()
