"""Live-server fixtures: `rankscope serve` run for real (python -m app.cli) on a free loopback
port with its own data folder, read until it listens, and always stopped.

Helpers only; the checks are in the test modules.
"""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import threading
import time
from collections.abc import Iterator
from pathlib import Path

import httpx
import pytest

ROOT = Path(__file__).resolve().parents[2]
START_SECONDS = 30.0


def free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


class LiveServer:
    """One `rankscope serve` process; its printed lines are collected as they come."""

    def __init__(self, data_dir: Path, *args: str) -> None:
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        cmd = [sys.executable, "-m", "app.cli", "serve", "--no-browser", "--host", "127.0.0.1",
               "--port", str(self.port), "--data-dir", str(data_dir), *args]
        self.proc = subprocess.Popen(cmd, cwd=ROOT, stdout=subprocess.PIPE,
                                     stderr=subprocess.STDOUT, text=True)
        self.lines: list[str] = []
        threading.Thread(target=self._read, daemon=True).start()
        self._wait_until_up()

    def _read(self) -> None:
        assert self.proc.stdout is not None
        for line in self.proc.stdout:
            self.lines.append(line.rstrip("\n"))

    def _wait_until_up(self) -> None:
        deadline = time.monotonic() + START_SECONDS
        while True:
            try:
                httpx.get(self.url + "/static/rankscope.css", timeout=2)
                return  # any answer (200, or 403 when sharing) means it listens
            except httpx.TransportError:
                if self.proc.poll() is not None or time.monotonic() > deadline:
                    self.stop()
                    raise RuntimeError("rankscope serve did not start:\n" +
                                       "\n".join(self.lines)) from None
                time.sleep(0.1)

    def printed(self, label: str) -> str:
        """The address printed after `label` (e.g. "edit link:")."""
        for line in self.lines:
            if label in line:
                return line.split(label, 1)[1].split()[0]
        raise KeyError(f"{label!r} not printed; got:\n" + "\n".join(self.lines))

    def kill(self) -> None:
        """SIGKILL: no shutdown code runs, as in a crash or a power cut of the process."""
        os.kill(self.proc.pid, signal.SIGKILL)
        self.proc.wait(timeout=30)

    def stop(self) -> None:
        if self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(timeout=15)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(timeout=15)


@pytest.fixture()
def serve(tmp_path: Path) -> Iterator:
    """serve(*args, data_dir=None) starts a server (default data folder: tmp_path/data);
    every server started is stopped at the end of the test."""
    started: list[LiveServer] = []

    def start(*args: str, data_dir: Path | None = None) -> LiveServer:
        server = LiveServer(data_dir or tmp_path / "data", *args)
        started.append(server)
        return server

    yield start
    for server in started:
        server.stop()


def upload(client: httpx.Client, name: str, data: bytes) -> str:
    r = client.post("/api/upload", files={"file": (name, data, "text/csv")})
    assert r.status_code == 201, r.text  # RFC 9110 §15.3.2
    return r.json()["session"]
