"""A real uvicorn on loopback stays responsive while a slow analysis runs: light pages answer
within a second, the slow request answers at its time budget with a message, nothing is saved
meanwhile, and the retry after the analysis ended is instant.

The analysis is made slow on purpose (a pure-Python loop, which holds the GIL between thread
switches as real work in Python does), so the test does not depend on the machine's speed.
"""

from __future__ import annotations

import socket
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import replace

import httpx
import pytest
import uvicorn

from rankscope.web.access.limits import Limits
from rankscope.web.analyst import Analyst
from rankscope.web.app import create_app
from tests.web.conftest import to_csv, units_table

BUDGET = 2.0
LIGHT_SECONDS = 1.0


def free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


class BusyAnalyst(Analyst):
    """Analyses with recipe steps spin for `seconds` first."""

    seconds = 4.0

    def _analyse(self, session, settings):
        if settings.steps:
            end = time.monotonic() + self.seconds
            spins = 0
            while time.monotonic() < end:
                spins += 1
        return super()._analyse(session, settings)


@contextmanager
def serving(app) -> Iterator[str]:
    """The app on a real uvicorn on a free loopback port, in this process; its base URL."""
    server = uvicorn.Server(uvicorn.Config(app, host="127.0.0.1", port=free_port(),
                                           log_level="warning"))
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    deadline = time.monotonic() + 20
    while not server.started:
        assert time.monotonic() < deadline, "uvicorn did not start"
        time.sleep(0.05)
    try:
        yield f"http://127.0.0.1:{server.config.port}"
    finally:
        server.should_exit = True
        thread.join(timeout=15)


@pytest.fixture()
def base() -> Iterator[str]:
    with serving(create_app(analyst=BusyAnalyst,
                            limits=replace(Limits(), analysis_seconds=BUDGET))) as url:
        yield url


def test_light_requests_answer_while_an_analysis_runs(base: str) -> None:
    with httpx.Client(base_url=base, timeout=30) as client:
        r = client.post("/api/upload", files={"file": ("units.csv", to_csv(units_table()),
                                                       "text/csv")})
        assert r.status_code == 201
        sid = r.json()["session"]
        change = {"kind": "step", "payload": {"step": "response", "column": "load"},
                  "base_version": 0, "change_id": "slow-1"}
        slow: dict[str, object] = {}

        def post_change() -> None:
            t0 = time.monotonic()
            with httpx.Client(base_url=base, timeout=30, cookies=client.cookies) as other:
                answer = other.post(f"/api/s/{sid}/changes", json=change)
            slow.update(status=answer.status_code, body=answer.json(),
                        seconds=time.monotonic() - t0)

        worker = threading.Thread(target=post_change)
        worker.start()
        time.sleep(0.3)  # the analysis is running now
        for path in ("/", "/static/rankscope.css", f"/api/s/{sid}/history", f"/s/{sid}",
                     "/api/sessions"):
            t0 = time.monotonic()
            answer = client.get(path)
            took = time.monotonic() - t0
            assert answer.status_code == 200, (path, answer.status_code)
            assert took < LIGHT_SECONDS, (path, took)
        # Nothing is saved while the analysis runs.
        assert client.get(f"/api/s/{sid}/history").json()["changes"] == []
        worker.join(timeout=30)
        # RFC 9110 §15.6.4: 503, the server cannot answer now; the body says why and what next.
        assert slow["status"] == 503
        assert BUDGET - 0.2 < slow["seconds"] < BUDGET + 1.5
        assert f"took longer than {BUDGET:g} s" in slow["body"]["error"]
        assert client.get(f"/api/s/{sid}/history").json()["changes"] == []
        time.sleep(BusyAnalyst.seconds - BUDGET + 0.5)  # the analysis ends and is kept
        t0 = time.monotonic()
        answer = client.post(f"/api/s/{sid}/changes?html=0", json=change)
        assert answer.status_code == 200, answer.text
        assert time.monotonic() - t0 < LIGHT_SECONDS
        history = client.get(f"/api/s/{sid}/history").json()
        assert [c["payload"] for c in history["changes"]] == [change["payload"]]


def test_oversized_uploads_are_cut_off_on_a_real_server() -> None:
    """RFC 9110 §15.5.14: 413. A declared size is refused before the body is read; a body
    streamed without one is cut off soon after the limit, not read to its end."""
    with serving(create_app(limits=replace(Limits(), max_upload_bytes=1_000_000))) as url:
        declared = httpx.post(url + "/api/upload", timeout=60, files={
            "file": ("big.csv", b"1,2\n" * 25_000_000, "text/csv")})  # 100 MB
        assert declared.status_code == 413
        assert "limit of 1 MB" in declared.json()["error"]
        sent = 0

        def body() -> Iterator[bytes]:
            nonlocal sent
            yield (b'--b0undary\r\nContent-Disposition: form-data; name="file"; '
                   b'filename="a.csv"\r\nContent-Type: text/csv\r\n\r\n')
            for _ in range(3000):  # 196 MB if it were all read
                sent += 65_536
                yield b"1,2\n" * 16_384
            yield b"\r\n--b0undary--\r\n"

        streamed = httpx.post(url + "/api/upload", content=body(), timeout=60, headers={
            "content-type": "multipart/form-data; boundary=b0undary"})
        assert streamed.status_code == 413
        assert sent < 50_000_000  # stopped near the limit (plus socket buffers)
        assert httpx.get(url + "/api/sessions").json() == []  # nothing saved
