"""Linear recipe steps on a session reduced by streaming: each gives the diagnosis the same
recipe gives in memory on the same file; steps that need the rows are refused, saving nothing.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
from fastapi.testclient import TestClient

from rankscope.design.recipe import Recipe, build_design
from rankscope.scale.reduced_steps import ROWS_NEEDED
from rankscope.tables.read import read_table
from rankscope.web.engines import create_stream_app
from tests.scale.reduced_check import assert_same_diagnosis, reference
from tests.scale.test_web_stream import BLOCK, RECIPE, WAIT, rows

Step = dict[str, Any]


def serve(tmp_path: Path, frame: pd.DataFrame) -> Iterator[tuple[TestClient, str, Path]]:
    """A session reduced by streaming the frame's CSV (response load), and the file."""
    (csv := tmp_path / "cold_rooms.csv").write_text(frame.to_csv(index=False))
    app = create_stream_app(csv, "load", tmp_path / "sessions", block_rows=BLOCK)
    assert app.state.reduction.wait(WAIT)
    client = TestClient(app)
    status = client.get("/api/reducing").json()
    assert status["state"] == "done", status
    yield client, status["session"], csv
    app.state.sessions.db.close()


@pytest.fixture()
def served(tmp_path: Path) -> Iterator[tuple[TestClient, str, Path]]:
    yield from serve(tmp_path, rows())


@pytest.fixture()
def gaps(tmp_path: Path) -> Iterator[tuple[TestClient, str, Path]]:
    """As served, with hours missing on every 7th row (those rows are left out)."""
    frame = rows()
    frame.loc[::7, "hours"] = np.nan
    yield from serve(tmp_path, frame)


def post(client: TestClient, sid: str, step: Step) -> Any:
    return client.post(f"/api/s/{sid}/changes", json={"kind": "step", "payload": step})


def assert_like_memory(client: TestClient, sid: str, csv: Path, steps: list[Step]) -> None:
    # Reference: the in-memory analysis of the same file with the same recipe.
    ref = reference(build_design(read_table(csv), Recipe(RECIPE + steps)))
    assert_same_diagnosis(client.get(f"/api/s/{sid}/diagnosis").json(), ref)


DROP = {"step": "drop", "column": "temp_f"}  # leaves a design of full rank

CASES: dict[str, list[Step]] = {
    "center": [DROP, {"step": "center", "column": "hours"}],
    "center kept": [{"step": "center", "column": "hours", "keep": True}],
    "center the response": [{"step": "center", "column": "load"}],
    "standardize kept": [DROP, {"step": "standardize", "column": "mass", "keep": True}],
    "standardize": [{"step": "standardize", "column": "temp_c"}],
    "unit_length named": [DROP, {"step": "unit_length", "column": "temp_c", "name": "tc"}],
    "multiply": [DROP, {"step": "multiply", "column": "hours", "by": 60}],
    "multiply named": [{"step": "multiply", "column": "hours", "by": 60, "name": "minutes"}],
    "combine sum": [{"step": "combine", "columns": ["hours", "mass"], "method": "sum",
                     "name": "hm"}],
    "combine mean": [DROP, {"step": "combine", "columns": ["mass", "temp_c", "hours"],
                            "method": "mean", "name": "avg"}],
    "combine difference": [{"step": "combine", "columns": ["temp_f", "temp_c"],
                            "method": "difference", "name": "gap"}],
    "no intercept": [DROP, {"step": "intercept", "include": False}],
    "intercept back": [{"step": "intercept", "include": False},
                       {"step": "intercept", "include": True}],
}


@pytest.mark.parametrize("steps", CASES.values(), ids=CASES.keys())
def test_step_equals_in_memory(served, steps: list[Step]) -> None:
    client, sid, csv = served
    for step in steps:
        r = post(client, sid, step)
        assert r.status_code == 200, r.text
    assert_like_memory(client, sid, csv, steps)


def test_sequence_and_undo_equal_in_memory(served) -> None:
    client, sid, csv = served
    steps: list[Step] = [
        {"step": "standardize", "column": "mass"},
        {"step": "multiply", "column": "temp_c", "by": 1.8, "name": "tc18", "keep": True},
        {"step": "combine", "columns": ["hours", "mass (standardized)"], "method": "sum",
         "name": "hm"},
        {"step": "drop", "column": "temp_f"},
        {"step": "center", "column": "hm"},
        {"step": "intercept", "include": False},
        {"step": "restore", "column": "temp_f"},
        {"step": "unit_length", "column": "tc18"},
    ]
    for step in steps:
        r = post(client, sid, step)
        assert r.status_code == 200, r.text
    assert_like_memory(client, sid, csv, steps)
    for k in (1, 2):
        assert client.post(f"/api/s/{sid}/undo").status_code == 200
        assert_like_memory(client, sid, csv, steps[:-k])


REFUSED: dict[str, tuple[Step, str]] = {
    "log": ({"step": "log", "column": "hours"}, ROWS_NEEDED),
    "power": ({"step": "power", "column": "hours", "exponent": 2, "keep": True}, ROWS_NEEDED),
    "response": ({"step": "response", "column": "mass"}, ROWS_NEEDED),
    "first component": ({"step": "combine", "columns": ["hours", "mass"],
                         "method": "first_component", "name": "pc"}, ROWS_NEEDED),
    "ratio": ({"step": "combine", "columns": ["hours", "mass"], "method": "ratio",
               "name": "r"}, ROWS_NEEDED),
    "categorical": ({"step": "center", "column": "region"}, "needs numbers"),
    "unknown": ({"step": "multiply", "column": "nope", "by": 2}, "no column named"),
    "name taken": ({"step": "multiply", "column": "hours", "by": 2, "name": "mass"},
                   "already exists"),
}


@pytest.mark.parametrize(("step", "words"), REFUSED.values(), ids=REFUSED.keys())
def test_refused_step_is_a_400_and_saves_nothing(served, step: Step, words: str) -> None:
    client, sid, _ = served
    before = client.get(f"/api/s/{sid}/history").json()
    diagnosis = client.get(f"/api/s/{sid}/diagnosis").json()
    r = post(client, sid, step)
    assert r.status_code == 400 and words in r.json()["error"], r.text
    assert client.get(f"/api/s/{sid}/history").json() == before
    assert client.get(f"/api/s/{sid}/diagnosis").json() == diagnosis


def test_steps_keep_the_rows_used(gaps) -> None:
    client, sid, csv = gaps
    steps: list[Step] = [{"step": "center", "column": "hours"},
                         {"step": "combine", "columns": ["hours (centered)", "mass"],
                          "method": "difference", "name": "gap"}]
    for step in steps:
        assert post(client, sid, step).status_code == 200
    assert_like_memory(client, sid, csv, steps)
    before = client.get(f"/api/s/{sid}/history").json()
    # Leaving out the column whose missing values removed rows would bring those rows back.
    r = post(client, sid, {"step": "drop", "column": "gap"})
    assert r.status_code == 400 and ROWS_NEEDED in r.json()["error"], r.text
    assert client.get(f"/api/s/{sid}/history").json() == before
