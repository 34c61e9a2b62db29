"""`rankscope serve` hands its options to the web app's run(); the server itself is not started.

The web app's run() is replaced by a recorder for these checks.
"""

from __future__ import annotations

import pytest

from tests.cli.runner import DEMO, run


@pytest.fixture
def calls(monkeypatch: pytest.MonkeyPatch) -> list[dict]:
    server = pytest.importorskip("app.web.server")
    seen: list[dict] = []

    def record(path, host, port, open_browser):
        seen.append({"path": path, "host": host, "port": port, "open_browser": open_browser})

    monkeypatch.setattr(server, "run", record)
    return seen


def test_defaults(calls: list[dict]) -> None:
    # Reference: the defaults documented in docs/cli.md.
    assert run("serve").code == 0
    assert calls == [{"path": None, "host": "127.0.0.1", "port": 8000, "open_browser": True}]


def test_file_and_options(calls: list[dict]) -> None:
    r = run("serve", DEMO, "--host", "0.0.0.0", "--port", "9001", "--no-browser")
    assert r.code == 0
    assert calls == [{"path": DEMO, "host": "0.0.0.0", "port": 9001, "open_browser": False}]


def test_bad_port_is_bad_input(calls: list[dict]) -> None:
    r = run("serve", "--port", "eighty")
    assert r.code == 2 and len(r.err.splitlines()) == 1
    assert calls == []
