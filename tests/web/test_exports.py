"""Downloads and recipe import through the web app: the report, recipe, script and design CSV
of a session, and a recipe file added to a session as undoable step changes.

References: unit definitions (NIST SP 811, the 1959 pound), numpy on the uploaded columns,
Python's csv and json modules, RFC 6266 (attachments), RFC 9110 (status codes), and the
first session's own recipe for the round trip.
"""

from __future__ import annotations

import csv
import io
import json
import os
import re
import time

import numpy as np
import pytest

from tests.web.conftest import step, to_csv

STEPS = [{"step": "drop", "column": "temp_f"}, {"step": "drop", "column": "mass_kg"},
         {"step": "standardize", "column": "hours"}]


def get(client, sid, kind):
    r = client.get(f"/api/s/{sid}/export/{kind}")
    assert r.status_code == 200, r.text
    # Reference: RFC 6266 §4.1, a download is an attachment with a file name.
    assert re.fullmatch(r'attachment; filename="units[\w.-]*"', r.headers["content-disposition"])
    return r


def design_of(table: dict) -> np.ndarray:
    """The design STEPS leave, built by hand: intercept, temp_c, mass_lb, hours scaled,
    region indicators against the first level."""
    hours = np.asarray(table["hours"])
    region = np.asarray(table["region"])
    return np.column_stack([np.ones(len(hours)), table["temp_c"], table["mass_lb"],
                            (hours - hours.mean()) / hours.std(ddof=1),
                            region == "south", region == "west"]).astype(float)


def recipe_of(client, sid) -> list:
    return client.get(f"/api/s/{sid}/history").json()["recipe"]


@pytest.fixture()
def edited(client, sid) -> str:
    for s in STEPS:
        assert step(client, sid, s).status_code == 200
    return sid


def test_report_is_one_self_contained_page(client, edited, table) -> None:
    r = get(client, edited, "report")
    assert r.headers["content-type"].startswith("text/html")
    page = r.text
    # Self-contained: plotly.js inline, nothing loaded from elsewhere.
    assert "<script>" in page and "Plotly" in page
    assert not re.search(r'<(script|link)[^>]+(src|href)="https?://', page)
    # Reference: numpy's rank of the design the recipe leaves (intercept, temp_c, mass_lb,
    # scaled hours, two region indicators, all independent).
    X = design_of(table)
    assert f"Rank {np.linalg.matrix_rank(X)} of {X.shape[1]} columns (full column rank)" in page
    assert "No column is a linear combination of the others" in page

def test_design_csv_and_script_rebuild_the_same_design(client, edited, table, tmp_path) -> None:
    text = get(client, edited, "design").text
    rows = list(csv.reader(io.StringIO(text)))  # Reference: Python's csv module
    header, values = rows[0], np.array(rows[1:], dtype=float)
    assert header[-1] == "load" and "temp_f" not in header and "mass_kg" not in header
    col = {name: values[:, j] for j, name in enumerate(header)}
    hours = np.asarray(table["hours"])
    # Reference: numpy on the uploaded column, standardized with the sample SD.
    scaled = next(name for name in header if name.startswith("hours"))
    np.testing.assert_allclose(col[scaled], (hours - hours.mean()) / hours.std(ddof=1),
                               rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(col["temp_c"], table["temp_c"], rtol=0, atol=0)
    np.testing.assert_allclose(col["load"], table["load"], rtol=0, atol=0)
    script = get(client, edited, "script").text
    (tmp_path / "units.csv").write_bytes(to_csv(table))
    namespace: dict = {}
    here = os.getcwd()
    os.chdir(tmp_path)  # the script reads the file by the name the session was made from
    try:
        exec(compile(script, "units-design.py", "exec"), namespace)  # noqa: S102
    finally:
        os.chdir(here)
    assert list(namespace["columns"]) == header[:-1]
    np.testing.assert_allclose(namespace["X"], values[:, :-1], rtol=1e-12, atol=1e-12)


def test_recipe_download_imports_into_a_new_session(client, edited, table) -> None:
    recipe_file = get(client, edited, "recipe").content
    doc = json.loads(recipe_file)  # Reference: Python's json module
    assert doc["steps"] == recipe_of(client, edited)
    up = client.post("/api/upload", files={"file": ("units.csv", to_csv(table), "text/csv")})
    fresh = up.json()["session"]

    def send():
        return client.post(f"/api/s/{fresh}/recipe",
                           files={"file": ("units-recipe.json", recipe_file, "application/json")},
                           data={"base_version": "0", "import_id": "imp-1"})

    r = send()
    assert r.status_code == 200, r.text
    assert r.json()["imported"] == len(doc["steps"])
    # Reference: the first session's recipe, step for step.
    assert recipe_of(client, fresh) == doc["steps"]
    # The import is one change (one version): one undo takes it all back.
    assert r.json()["version"] == 1
    assert client.post(f"/api/s/{fresh}/undo").status_code == 200
    assert recipe_of(client, fresh) == []
    # The same import sent again (a retry after a lost answer) saves nothing twice.
    again = send()
    assert again.status_code == 200 and again.json()["imported"] == len(doc["steps"])
    ids = [e["change_id"] for e in client.get(f"/api/s/{fresh}/history").json()["entries"]]
    assert ids[0] == "imp-1" and len(ids) == len(set(ids)) == 2


@pytest.mark.parametrize("name,data,found", [
    ("notes.json", b"{not json", "JSON"),
    ("empty.json", b"[]", "no steps"),
    ("unknown.json", b'[{"step": "teleport"}]', "teleport"),
    ("missing.json", b'[{"step": "drop", "column": "no_such"}]', "no_such"),
    ("photo.json", b"\x89PNG\r\n\x1a\n" + bytes(100), "UTF-8"),
    ("big.json", b"[" + b" " * 1_100_000 + b"]", "far smaller"),
])
def test_bad_recipe_files_get_a_message_and_change_nothing(client, sid, name, data,
                                                           found) -> None:
    before = client.get(f"/api/s/{sid}/history").json()
    r = client.post(f"/api/s/{sid}/recipe", files={"file": (name, data, "application/json")})
    # Reference: RFC 9110 §15.5.1 (400), with the file named in the message.
    assert r.status_code == 400, r.text
    assert name in r.json()["error"] and found in r.json()["error"]
    assert client.get(f"/api/s/{sid}/history").json() == before


def test_recipe_that_does_not_fit_the_session_is_refused_whole(client, sid) -> None:
    step(client, sid, {"step": "drop", "column": "hours"})
    before = client.get(f"/api/s/{sid}/history").json()
    data = json.dumps([{"step": "drop", "column": "temp_f"},
                       {"step": "drop", "column": "hours"}]).encode()
    r = client.post(f"/api/s/{sid}/recipe", files={"file": ("r.json", data, "application/json")})
    assert r.status_code == 400 and "hours" in r.json()["error"]  # RFC 9110 §15.5.1
    # Reference: the history before; not even the first step, which fits, was saved.
    assert client.get(f"/api/s/{sid}/history").json() == before


def test_import_on_an_old_version_that_no_longer_fits_is_a_conflict(client, sid) -> None:
    v = client.get(f"/api/s/{sid}/history").json()["version"]
    step(client, sid, {"step": "drop", "column": "hours"})
    data = json.dumps([{"step": "drop", "column": "temp_f"},
                       {"step": "drop", "column": "hours"}]).encode()
    r = client.post(f"/api/s/{sid}/recipe", files={"file": ("r.json", data, "application/json")},
                    data={"base_version": str(v), "import_id": "late"})
    # Reference: RFC 9110 §15.5.10; the import is one change, so none of it is saved.
    assert r.status_code == 409, r.text
    assert r.json()["imported"] == 0 and "None of the 2" in r.json()["error"]
    entries = client.get(f"/api/s/{sid}/history").json()["entries"]
    assert "late" not in [e["change_id"] for e in entries]


def test_a_recipe_over_the_step_limit_is_refused_at_once(client, sid) -> None:
    before = client.get(f"/api/s/{sid}/history").json()
    steps = [{"step": "center", "column": "hours"}] * 25_000  # under the 1 MB file cap
    data = json.dumps(steps).encode()
    assert len(data) < 1_000_000
    started = time.perf_counter()
    r = client.post(f"/api/s/{sid}/recipe", files={"file": ("long.json", data, "application/json")})
    seconds = time.perf_counter() - started
    assert r.status_code == 400, r.text  # RFC 9110 §15.5.1
    text = r.json()["error"]
    assert "25,000 steps" in text and "at most 1,000" in text and "long.json" in text
    # Refused before any step is replayed (the old import replayed 2,000 steps in minutes);
    # a generous bound, as the machine may be busy.
    assert seconds < 10, seconds
    assert client.get(f"/api/s/{sid}/history").json() == before


def test_a_recipe_at_the_step_limit_is_one_version(client, sid) -> None:
    v = client.get(f"/api/s/{sid}/history").json()["version"]
    steps = [{"step": "response", "column": "load"}] * 1000  # the same choice, again and again
    data = json.dumps(steps).encode()
    r = client.post(f"/api/s/{sid}/recipe", files={"file": ("full.json", data, "application/json")},
                    data={"import_id": "at-limit"})
    assert r.status_code == 200, r.text
    assert r.json()["imported"] == 1000 and r.json()["version"] == v + 1
    h = client.get(f"/api/s/{sid}/history").json()
    # Reference: the store's history: one entry for the import, holding every step.
    assert [e["change_id"] for e in h["entries"]][-1] == "at-limit"
    assert h["recipe"][-1000:] == steps


def test_unknown_download_is_a_client_error(client, sid) -> None:
    r = client.get(f"/api/s/{sid}/export/everything")
    assert r.status_code == 400 and "report" in r.json()["error"]  # RFC 9110 §15.5.1
