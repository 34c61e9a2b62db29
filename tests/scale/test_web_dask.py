"""The web app on a Parquet dataset reduced on a real local Dask cluster: the page names the
planted relation, the numbers equal the in-memory analysis, and row-needing changes are refused.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

# CI installs the test extra, which includes dask: there a missing dask fails the import.
if not os.environ.get("CI"):
    pytest.importorskip("dask.distributed",
                        reason="dask[distributed] is not installed (pip install -e '.[dask]')")

from dask.distributed import LocalCluster  # noqa: E402
from fastapi.testclient import TestClient  # noqa: E402

from rankscope.design.recipe import Recipe, build_design
from rankscope.scale.reduced_steps import ROWS_NEEDED
from rankscope.tables.read import read_table
from rankscope.web.app import create_app
from rankscope.web.engines import create_dask_app, open_store
from tests.scale.reduced_check import assert_matches_in_memory

RECIPE = [{"step": "response", "column": "load"}]


def rows(n: int = 1800) -> pd.DataFrame:
    """Random columns with one planted exact relation: temp_f = 32 + 1.8·temp_c."""
    rng = np.random.default_rng(5)
    temp_c = rng.normal(12, 6, n)
    hours = rng.uniform(2, 12, n)
    mass = rng.normal(500, 80, n)
    region = rng.choice(["north", "south", "west"], n)
    load = 50 + 3 * temp_c + 0.2 * mass + 4 * hours + rng.normal(0, 5, n)
    return pd.DataFrame({"temp_c": temp_c, "temp_f": 32 + 1.8 * temp_c, "hours": hours,
                         "mass": mass, "region": region, "load": load})


@pytest.fixture(scope="module")
def dataset(tmp_path_factory) -> tuple[Path, Path]:
    """A folder of 3 Parquet files (2 row groups each) and the same rows in one file."""
    df, root = rows(), tmp_path_factory.mktemp("web-dask")
    (folder := root / "cold_rooms").mkdir()
    for start in range(0, len(df), 600):
        name = folder / f"part-{start // 600}.parquet"
        df.iloc[start:start + 600].to_parquet(name, row_group_size=300)
    df.to_parquet(whole := root / "whole.parquet")
    return folder, whole


@pytest.fixture(scope="module")
def served(dataset, tmp_path_factory):
    """The app the CLI builds, on a two-process cluster on loopback, shut down after."""
    folder, _ = dataset
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                      dashboard_address=None, host="127.0.0.1") as cluster:
        app, session, _ = create_dask_app(folder, "load", cluster.scheduler_address,
                                          tmp_path_factory.mktemp("sessions"))
    # The cluster is gone here: everything below works on the reduced factor alone.
    yield TestClient(app), session.session_id
    app.state.sessions.db.close()


def test_page_and_numbers_equal_in_memory(served, dataset) -> None:
    client, sid = served
    _, whole = dataset
    design = build_design(read_table(whole), Recipe(RECIPE))
    # Reference: the in-memory analysis of the same rows read as one file.
    assert_matches_in_memory(client, sid, design)
    page = client.get(f"/s/{sid}/inspect")
    assert page.status_code == 200
    listed = page.text.split('id="dependency-list"')[1].split("</ol>")[0]
    assert "temp_f" in listed and "temp_c" in listed
    assert "no Spearman correlations" in page.text
    assert client.get(f"/s/{sid}").status_code == 200


def test_keep_ridge_and_drop_work_other_changes_refused(served) -> None:
    client, sid = served
    url = f"/api/s/{sid}/changes"
    r = client.post(url, json={"kind": "keep", "payload": {"column": "temp_f"}})
    assert r.status_code == 200, r.text
    basis = client.get(f"/api/s/{sid}/diagnosis").json()["basis"]
    assert "temp_f" in basis and "temp_c" not in basis
    assert client.post(url, json={"kind": "ridge", "payload": {"penalty": 0.5}}
                       ).status_code == 200
    assert client.get(f"/api/s/{sid}/diagnosis").json()["ridge"] is not None
    r = client.post(url, json={"kind": "step", "payload": {"step": "drop", "column": "temp_f"}})
    assert r.status_code == 200, r.text
    d = client.get(f"/api/s/{sid}/diagnosis").json()
    assert "temp_f" not in d["columns"] and d["full_rank"]
    before = client.get(f"/api/s/{sid}/history").json()
    for payload in ({"step": "log", "column": "hours"},
                    {"step": "response", "column": "mass"}):
        r = client.post(url, json={"kind": "step", "payload": payload})
        assert r.status_code == 400 and ROWS_NEEDED in r.json()["error"]
    assert client.get(f"/api/s/{sid}/history").json() == before  # nothing was lost
    assert client.get(f"/api/s/{sid}/export/design").status_code == 400
    assert client.get(f"/api/s/{sid}/spearman").status_code == 200
    assert client.get(f"/api/s/{sid}/export/report").status_code == 200
    r = client.post(url, json={"kind": "step", "payload": {"step": "restore",
                                                           "column": "temp_f"}})
    assert r.status_code == 200, r.text
    assert "temp_f" in client.get(f"/api/s/{sid}/diagnosis").json()["columns"]
    assert client.post(f"/api/s/{sid}/undo").status_code == 200


def test_reduced_session_comes_back_in_a_new_app_on_its_folder(served) -> None:
    """What a restart does, in process: a plain app on the same data folder, the cluster long
    gone, serves the session from the factor kept in the store."""
    client, sid = served
    before = client.get(f"/api/s/{sid}/diagnosis").json()
    store = open_store(client.app.state.sessions.db.root)
    try:
        again = TestClient(create_app(store))
        after = again.get(f"/api/s/{sid}/diagnosis")
        assert after.status_code == 200, after.text
        # Reference: the first app's diagnosis of the same kept factor and history.
        for key in ("columns", "rank", "basis", "vif", "condition_indices"):
            assert after.json()[key] == before[key], key
        r = again.post(f"/api/s/{sid}/changes", json={
            "kind": "step", "payload": {"step": "log", "column": "hours"}})
        assert r.status_code == 400 and ROWS_NEEDED in r.json()["error"]
    finally:
        store.close()
