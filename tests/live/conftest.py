"""Live-server fixtures: `rankscope serve` run for real (python -m rankscope.cli, see
rankscope.web.spawn) on a free loopback port with its own data folder, read until it
listens, and always stopped.

Helpers only; the checks are in the test modules.
"""

from __future__ import annotations

import threading
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import httpx
import pytest

from rankscope.web.spawn import LiveServer, free_port

__all__ = ["HELD", "LiveServer", "Writer", "free_port", "serve", "upload"]

#: The launcher of a held server (LiveServer(held=True)): imported, waiting to serve.
HELD = ("-m", "tests.live.held")


@pytest.fixture()
def serve(tmp_path: Path) -> Iterator:
    """serve(*args, data_dir=None, held=False, open_files=None) starts a server (default
    data folder: tmp_path/data); held: imported and waiting for server.release() to serve;
    open_files: its (soft, hard) open-file limit. Every server started is stopped at the end
    of the test."""
    started: list[LiveServer] = []

    def start(*args: str, data_dir: Path | None = None, held: bool = False,
              open_files: tuple[int, int] | None = None) -> LiveServer:
        server = LiveServer(data_dir or tmp_path / "data", *args, held=held,
                            launcher=HELD if held else ("-m", "rankscope.cli"),
                            open_files=open_files)
        started.append(server)
        return server

    yield start
    for server in started:
        server.stop()


def upload(client: httpx.Client, name: str, data: bytes) -> str:
    r = client.post("/api/upload", files={"file": (name, data, "text/csv")})
    assert r.status_code == 201, r.text  # RFC 9110 §15.3.2
    return r.json()["session"]


class Writer:
    """A client thread sending changes to one session, each on the version the one before
    was saved as, until the server is gone or `seconds` pass. body(i) is the i-th change
    (kind and payload); its id is "<prefix>-<i>". Keeps every acknowledged (version, id) in
    order: exactly what a client was promised."""

    def __init__(self, url: str, sid: str, version: int, body: Callable[[int], dict[str, Any]],
                 prefix: str = "w", seconds: float = 60.0) -> None:
        self.url, self.sid, self.version, self.body = url, sid, version, body
        self.prefix, self.seconds = prefix, seconds
        self.acked: list[tuple[int, str]] = []
        self.failures: list[str] = []  # answers other than 200 (the writer stops at one)
        self._thread = threading.Thread(target=self._run, daemon=True)
        self._thread.start()

    def _run(self) -> None:
        deadline = time.monotonic() + self.seconds
        version, i = self.version, 0
        with httpx.Client(base_url=self.url, timeout=10) as client:
            while time.monotonic() < deadline:
                cid = f"{self.prefix}-{i}"
                try:
                    r = client.post(f"/api/s/{self.sid}/changes?html=0", json={
                        **self.body(i), "base_version": version, "change_id": cid})
                except httpx.TransportError:
                    return  # the server is gone: what was in flight was not acknowledged
                if r.status_code != 200:
                    self.failures.append(f"{cid}: {r.status_code} {r.text}")
                    return
                version = r.json()["saved_as"]
                self.acked.append((version, cid))
                i += 1

    def wait_for(self, acks: int, timeout: float = 60.0) -> bool:
        """True once `acks` changes are acknowledged; False if the writer stopped or the
        time ran out first."""
        deadline = time.monotonic() + timeout
        while len(self.acked) < acks:
            if not self._thread.is_alive() or time.monotonic() > deadline:
                return len(self.acked) >= acks
            time.sleep(0.002)
        return True

    def join(self, timeout: float = 30.0) -> None:
        self._thread.join(timeout)
        assert not self._thread.is_alive(), "the writer did not stop"
