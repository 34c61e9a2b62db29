"""server.run as the CLI calls it: a real uvicorn process on a loopback port, with a file
opened at start; a missing file is refused before anything listens."""

from __future__ import annotations

import re
import socket
import subprocess
import sys
import time
from pathlib import Path

import httpx
import pytest

from rankscope.tables.errors import InputError
from rankscope.web.server import run
from tests.browser.conftest import demo_path

ROOT = Path(__file__).resolve().parents[2]
DEMO = demo_path()


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def test_missing_file_is_refused_before_serving(tmp_path) -> None:
    with pytest.raises(InputError):
        run(str(tmp_path / "absent.csv"), "127.0.0.1", _free_port(), open_browser=False)


def test_run_serves_the_given_file() -> None:
    port = _free_port()
    code = f"from rankscope.web.server import run; run({str(DEMO)!r}, '127.0.0.1', {port}, False)"
    proc = subprocess.Popen([sys.executable, "-c", code], cwd=ROOT, stdout=subprocess.PIPE,
                            stderr=subprocess.STDOUT, text=True)
    try:
        url = f"http://127.0.0.1:{port}"
        deadline = time.monotonic() + 30
        while True:
            try:
                home = httpx.get(url + "/", timeout=2)
                break
            except httpx.TransportError:
                if time.monotonic() > deadline or proc.poll() is not None:
                    raise
                time.sleep(0.1)
        # The start page lists the session opened from the file (reference: its name).
        link = re.search(r'href="(/s/[^"]+)">[^<]*cold_storage.csv<', home.text)
        assert link, home.text
        overview = httpx.get(url + link.group(1), timeout=10)
        assert overview.status_code == 200 and "energy_kwh" in overview.text
    finally:
        proc.terminate()
        out, _ = proc.communicate(timeout=10)
    assert f"http://127.0.0.1:{port}/s/" in out  # the address printed for the user
