"""Shared fixtures for the browser tests: one rankscope server on a free loopback port in a
thread, and Debian's Chromium driven by Playwright (skipped without it, unless CI is set)."""

from __future__ import annotations

import socket
import threading
import time
from collections.abc import Iterator
from pathlib import Path

import pytest
import uvicorn

from rankscope.web.app import create_app

CHROMIUM = Path("/usr/bin/chromium")
ROOT = Path(__file__).resolve().parents[2]
ARTIFACTS = ROOT / "tests" / "artifacts"
DEMO = ROOT / "demo_data" / "cold_storage.csv"


def demo_path() -> Path:
    """The demo table; written by demo_data/make_demo.py first if the file is not there."""
    if not DEMO.exists():
        import subprocess
        import sys

        ARTIFACTS.mkdir(parents=True, exist_ok=True)
        out = ARTIFACTS / DEMO.name
        if not out.exists():
            subprocess.run([sys.executable, str(DEMO.parent / "make_demo.py"), "--out", str(out)],
                           check=True)
        return out
    return DEMO


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@pytest.fixture(scope="session")
def base_url() -> Iterator[str]:
    port = _free_port()
    # Live feeds stay open while a page is; a bounded graceful stop keeps teardown short.
    server = uvicorn.Server(uvicorn.Config(create_app(), host="127.0.0.1", port=port,
                                           log_level="warning", timeout_graceful_shutdown=2))
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    deadline = time.monotonic() + 20
    while not server.started:
        if time.monotonic() > deadline or not thread.is_alive():
            raise RuntimeError("the rankscope test server did not start")
        time.sleep(0.05)
    yield f"http://127.0.0.1:{port}"
    server.should_exit = True
    thread.join(timeout=10)


@pytest.fixture()
def page(browser, base_url):
    context = browser.new_context(base_url=base_url, viewport={"width": 1400, "height": 1000})
    pg = context.new_page()
    pg.set_default_timeout(30_000)
    yield pg
    context.close()


@pytest.fixture(scope="session")
def artifacts() -> Path:
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    return ARTIFACTS
