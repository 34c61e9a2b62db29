"""`rankscope serve` hands its options to the web app's run(); the server itself is not started.

The web app's run() is replaced by a recorder for these checks.
"""

from __future__ import annotations

import pytest

from tests.cli.runner import DEMO, run


@pytest.fixture
def calls(monkeypatch: pytest.MonkeyPatch) -> list[dict]:
    server = pytest.importorskip("rankscope.web.server")
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


@pytest.fixture
def full_calls(monkeypatch: pytest.MonkeyPatch) -> list[dict]:
    """Like calls, also keeping the options only given when asked for."""
    server = pytest.importorskip("rankscope.web.server")
    seen: list[dict] = []

    def record(path, host, port, open_browser, **options):
        seen.append({"path": path, "host": host, "port": port, "open_browser": open_browser,
                     **options})

    monkeypatch.setattr(server, "run", record)
    return seen


def test_data_dir_and_share(full_calls: list[dict], tmp_path) -> None:
    # Reference: docs/cli.md and docs/sharing.md: --share listens on every address of the
    # local network (0.0.0.0) unless --host says otherwise.
    assert run("serve", "--data-dir", str(tmp_path), "--share", "--no-browser").code == 0
    assert full_calls[-1] == {"path": None, "host": "0.0.0.0", "port": 8000,
                              "open_browser": False, "data_dir": str(tmp_path), "share": True}
    assert run("serve", "--share", "--host", "127.0.0.1").code == 0
    assert full_calls[-1]["host"] == "127.0.0.1" and full_calls[-1]["share"] is True
    assert run("serve").code == 0
    assert full_calls[-1] == {"path": None, "host": "127.0.0.1", "port": 8000,
                              "open_browser": True}


def test_table_memory_in_megabytes(full_calls: list[dict]) -> None:
    # Reference: docs/cli.md: --table-memory-mb in decimal MB, as --max-upload-mb.
    assert run("serve", "--table-memory-mb", "250").code == 0
    assert full_calls[-1]["table_memory"] == 250_000_000
    for bad in ("0", "-5", "nan"):
        r = run("serve", "--table-memory-mb", bad)
        assert r.code == 2 and "--table-memory-mb" in r.err and len(r.err.splitlines()) == 1
    assert len(full_calls) == 1
    assert "--table-memory-mb" in run("serve", "--help").out
