"""The web app on a CSV streamed block by block in the background: the progress route counts up
to done, the session's numbers equal the in-memory analysis, and Cancel leaves no session.
"""

from __future__ import annotations

import threading
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
from fastapi.testclient import TestClient

from rankscope.design.recipe import Recipe, build_design
from rankscope.scale import reduction
from rankscope.tables.read import read_table
from rankscope.web.engines import create_stream_app
from tests.scale.reduced_check import assert_matches_in_memory

RECIPE = [{"step": "response", "column": "load"}]
N, BLOCK = 1200, 200  # six blocks of rows
WAIT = 120  # seconds a test waits for the background thread before it gives up (no timing)


def rows(n: int = N) -> pd.DataFrame:
    """Random columns with one planted exact relation: temp_f = 32 + 1.8·temp_c."""
    rng = np.random.default_rng(11)
    temp_c = rng.normal(12, 6, n)
    hours = rng.uniform(2, 12, n)
    mass = rng.normal(500, 80, n)
    region = rng.choice(["north", "south", "west"], n)
    load = 50 + 3 * temp_c + 0.2 * mass + 4 * hours + rng.normal(0, 5, n)
    return pd.DataFrame({"temp_c": temp_c, "temp_f": 32 + 1.8 * temp_c, "hours": hours,
                         "mass": mass, "region": region, "load": load})


class Gate:
    """Holds the stream after each block until the test lets it go, so the test sees every
    block's progress in turn (lockstep, not timing)."""

    def __init__(self) -> None:
        self.reported = threading.Event()
        self.go = threading.Event()

    def stream(self, real: Any) -> Any:
        def run(source: Any, recipe: Any, *, progress: Any, **kw: Any) -> Any:
            def step(rows_done: int, done: int, total: int) -> None:
                progress(rows_done, done, total)
                self.reported.set()
                assert self.go.wait(WAIT)
                self.go.clear()
            return real(source, recipe, progress=step, **kw)
        return run

    def next_block(self) -> None:
        assert self.reported.wait(WAIT)
        self.reported.clear()


@pytest.fixture()
def csv_path(tmp_path: Path) -> Path:
    (p := tmp_path / "cold_rooms.csv").write_text(rows().to_csv(index=False))
    return p


@pytest.fixture()
def gated(csv_path, tmp_path, monkeypatch) -> Iterator[tuple[TestClient, Any, Gate]]:
    """The app the CLI builds, its reduction held block by block by a Gate."""
    gate = Gate()
    monkeypatch.setattr(reduction, "stream_source", gate.stream(reduction.stream_source))
    app = create_stream_app(csv_path, "load", tmp_path / "sessions", block_rows=BLOCK)
    yield TestClient(app), app, gate
    app.state.reduction.cancel()
    gate.go.set()
    app.state.reduction.wait(WAIT)
    app.state.sessions.db.close()


def test_progress_counts_up_then_session_equals_in_memory(gated, csv_path) -> None:
    client, app, gate = gated
    page = client.get("/reducing")
    assert page.status_code == 200 and 'id="cancel-button"' in page.text
    seen = []
    for _ in range(N // BLOCK):
        gate.next_block()
        status = client.get("/api/reducing").json()
        assert status["state"] == "running" and status["bytes_total"] > 0
        seen.append(status["rows"])
        gate.go.set()
    assert seen == sorted(set(seen)) and seen[0] > 0 and seen[-1] == N
    assert app.state.reduction.wait(WAIT)
    status = client.get("/api/reducing").json()
    assert status["state"] == "done", status
    assert status["fraction"] == 1.0 and status["url"] == f"/s/{status['session']}/inspect"
    assert 'id="reduction-link" href="' + status["url"] in client.get("/reducing").text
    sid = status["session"]

    design = build_design(read_table(csv_path), Recipe(RECIPE))
    # Reference: the in-memory analysis of the same file, read whole.
    assert_matches_in_memory(client, sid, design)
    page = client.get(status["url"])
    assert page.status_code == 200
    listed = page.text.split('id="dependency-list"')[1].split("</ol>")[0]
    assert "temp_f" in listed and "temp_c" in listed
    assert "no Spearman correlations" in page.text
    assert client.get(f"/s/{sid}").status_code == 200


def test_cancel_stops_the_stream_and_makes_no_session(gated) -> None:
    client, app, gate = gated
    gate.next_block()  # the stream is held after its first block
    pressed = client.post("/api/reducing/cancel").json()
    assert pressed["state"] == "running" and pressed["stopping"]
    gate.go.set()
    assert app.state.reduction.wait(WAIT)
    status = client.get("/api/reducing").json()
    assert status["state"] == "cancelled" and status["session"] is None
    assert status["url"] is None and status["rows"] == BLOCK
    page = client.get("/reducing")
    assert "The reduction was cancelled" in page.text
    assert 'id="reduction-open" hidden' in page.text and "/s/" not in page.text
    assert app.state.sessions.recent() == []
    assert client.get("/").status_code == 200  # the server stays up
    # The no-script form posts too, and is answered with the progress page.
    again = client.post("/reducing/cancel")
    assert again.status_code == 200 and "The reduction was cancelled" in again.text
