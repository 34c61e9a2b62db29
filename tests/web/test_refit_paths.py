"""The web app's refits on the factor give what a replay of the recipe from scratch gives.

Each linear change goes through the API; its analysis is compared with analyse() of the same
settings (the from-scratch replay on the rows) and the fit with numpy.linalg.lstsq.
"""

from __future__ import annotations

import io

import numpy as np
import pytest
from fastapi.testclient import TestClient

from rankscope.core.diagnosis import Diagnosis
from rankscope.design.recipe import build_design
from rankscope.web.analyst import Analysis, analyse
from tests.scale.compare import assert_same, close
from tests.web.conftest import step, to_csv


def units_of(table, settings) -> dict[str, float]:
    """||y|| / ||x_j|| per design column: the natural size of its coefficient."""
    d = build_design(table, settings.recipe)
    y = np.linalg.norm(d.y) if d.y is not None else 1.0
    return {c: y / max(np.linalg.norm(d.X[:, j]), 1e-300) for j, c in enumerate(d.columns)}


def check(client: TestClient, sid: str, table) -> Analysis:
    analyst = client.app.state.analyst
    session = analyst.session(sid)
    got = analyst.current(session)
    # reference: the from-scratch replay of the same settings on the rows
    ref = analyse(session.table, got.settings)
    a, b = got.diagnosis, ref.diagnosis
    # rank, basis, relations, condition numbers and indices, VIFs, GVIFs and the fit, to 10
    # digits (quantities at rounding level compared only to the precision they have)
    assert_same(Diagnosis(**a), Diagnosis(**b), units_of(session.table, got.settings))
    ca, cb = a["correlations"], b["correlations"]
    assert ca["columns"] == cb["columns"] and ca["order"] == cb["order"]
    assert close(ca["pearson"], cb["pearson"], 1e-9)
    if ca["spearman"] is not None:  # carried over: it must be the rows' matrix
        assert close(ca["spearman"], cb["spearman"], 1e-9)
    assert (a["ridge"] is None) == (b["ridge"] is None)
    if b["ridge"] is not None and not b["rank_note"]:
        assert close(a["ridge"]["penalties"], b["ridge"]["penalties"], 1e-9)
        for c, path in b["ridge"]["coefficients"].items():
            assert close(a["ridge"]["coefficients"][c], path, 1e-9), c
    assert a["notes"] == b["notes"]
    assert (got.columns, got.response, got.groups) == (ref.columns, ref.response, ref.groups)
    assert (got.rows_total, got.rows_used, got.notes) == (ref.rows_total, ref.rows_used,
                                                          ref.notes)
    assert got.working == ref.working
    return got


@pytest.fixture()
def gappy() -> dict:
    """The units table with a few missing hours and regions (rows are deleted)."""
    from tests.web.conftest import units_table

    cols = units_table()
    hours = [str(v) for v in cols["hours"]]
    region = list(cols["region"])
    for i in (3, 17, 41):
        hours[i] = ""
    region[8] = ""
    return {**cols, "hours": hours, "region": region}


def upload(client: TestClient, cols: dict) -> str:
    out = io.StringIO()
    names = list(cols)
    out.write(",".join(names) + "\n")
    for i in range(len(cols[names[0]])):
        out.write(",".join(str(cols[c][i]) for c in names) + "\n")
    r = client.post("/api/upload", files={"file": ("g.csv", out.getvalue().encode(),
                                                   "text/csv")})
    assert r.status_code == 201, r.text
    return r.json()["session"]


LINEAR = [
    ("step", {"step": "response", "column": "load"}),
    ("step", {"step": "drop", "column": "temp_f"}),
    ("step", {"step": "center", "column": "mass_lb"}),
    ("keep", {"column": "mass_kg"}),
    ("step", {"step": "restore", "column": "temp_f"}),
    ("ridge", {"penalty": 0.3}),
    ("step", {"step": "standardize", "column": "temp_c", "keep": True}),
    ("step", {"step": "multiply", "column": "mass_kg", "by": -2.5}),
    ("step", {"step": "combine", "columns": ["temp_f", "hours"], "method": "mean",
              "name": "mixed"}),
    ("step", {"step": "intercept", "include": False}),
    ("step", {"step": "unit_length", "column": "mixed"}),
]


def test_linear_changes_on_the_factor_equal_the_replay(client, table) -> None:
    r = client.post("/api/upload", files={"file": ("units.csv", to_csv(table), "text/csv")})
    sid = r.json()["session"]
    paths = [check(client, sid, table).path]
    for kind, payload in LINEAR:
        assert step(client, sid, payload, kind).status_code == 200
        paths.append(check(client, sid, table).path)
    assert paths.count("factor") >= len(LINEAR) - 1  # only changes of wording rebuild


def test_fit_on_the_factor_matches_lstsq(client, sid, table) -> None:
    step(client, sid, {"step": "drop", "column": "temp_f"})
    step(client, sid, {"step": "drop", "column": "mass_kg"})
    step(client, sid, {"step": "center", "column": "hours"})
    got = check(client, sid, table)
    assert got.path == "factor"
    hours = np.asarray(table["hours"], float)
    X = np.column_stack([np.ones(60), table["temp_c"], table["mass_lb"], hours - hours.mean()]
                        + [np.asarray(table["region"]) == lv for lv in ("south", "west")])
    beta = np.linalg.lstsq(X, np.asarray(table["load"]), rcond=None)[0]
    coef = got.diagnosis["fit"]["coefficients"]
    names = ["(intercept)", "temp_c", "mass_lb", "hours (centered)", "region[south]",
             "region[west]"]
    # reference: numpy.linalg.lstsq on the same design built by hand
    assert [coef[n] for n in names] == pytest.approx(beta, rel=1e-9)


def test_missing_values_and_categorical_changes(client, gappy) -> None:
    sid = upload(client, gappy)
    changes = [
        {"step": "response", "column": "load"},
        {"step": "drop", "column": "mass_kg"},
        {"step": "indicators", "column": "region", "reference": "west"},
        {"step": "drop", "column": "region"},
        {"step": "multiply", "column": "temp_c", "by": 3.0},
        {"step": "missing", "column": "hours", "policy": "drop_column"},
        {"step": "restore", "column": "region"},
    ]
    for payload in changes:
        assert step(client, sid, payload).status_code == 200
        got = check(client, sid, gappy)
        # reference: the CSV has 60 rows, 4 of them with a blank hours or region cell
        assert got.rows_total == 60


def test_spearman_on_request_is_the_rows(client, sid, table) -> None:
    from scipy.stats import spearmanr

    step(client, sid, {"step": "center", "column": "hours"})
    analyst = client.app.state.analyst
    got = analyst.current(analyst.session(sid))
    assert got.path == "factor" and got.diagnosis["correlations"]["spearman"] is None
    figs = client.get(f"/api/s/{sid}/figures").json()
    assert figs["heatmap-spearman"] is None and figs["heatmap-pearson"] is not None
    page = client.get(f"/s/{sid}/inspect").text
    assert "data-spearman-fetch" in page
    body = client.get(f"/api/s/{sid}/spearman").json()
    assert "computed from the rows" in body["note"]
    z, labels = body["figure"]["data"][0]["z"], body["figure"]["data"][0]["x"]
    i, j = labels.index("hours (centered)"), labels.index("temp_c")
    # reference: scipy.stats.spearmanr on the uploaded columns (centering keeps ranks)
    assert z[i][j] == pytest.approx(spearmanr(table["hours"], table["temp_c"])[0], abs=1e-9)
    # the fetched matrix stays with the analysis
    assert client.get(f"/api/s/{sid}/figures").json()["heatmap-spearman"] is not None


def wide_table(n: int = 700, levels: int = 310, seed: int = 11) -> dict:
    """A category with `levels` levels (a design wider than the optimal-order limit), three
    whole-number columns with a planted exact relation w3 = w1 + 2·w2, a near copy of w1
    and a response."""
    rng = np.random.default_rng(seed)
    w1 = rng.integers(-50, 50, n)
    w2 = rng.integers(-50, 50, n)
    store = [f"s{i:03d}" for i in np.r_[np.arange(levels), rng.integers(0, levels, n - levels)]]
    near = np.round(w1 + rng.normal(0, 0.01, n), 3)
    load = np.round(2.0 * w1 - w2 + rng.normal(0, 1, n), 3)
    return {"w1": w1, "w2": w2, "w3": w1 + 2 * w2, "near": near, "store": store, "load": load}


def test_wide_design_changes_equal_the_replay(client, monkeypatch) -> None:
    """A design of 316 columns: every change on the factor gives the from-scratch analysis,
    the clustered order included, and Spearman waits for the page to ask."""
    from rankscope.core.correlation import OPTIMAL_ORDER_LIMIT
    from rankscope.web import refit

    monkeypatch.setattr(refit, "SPEARMAN_CELLS", 1_000)  # this table counts as wide
    cols = wide_table()
    sid = upload(client, cols)
    table = client.app.state.analyst.session(sid).table
    changes = [{"step": "response", "column": "load"}, {"step": "drop", "column": "near"},
               {"step": "drop", "column": "w3"}, {"step": "restore", "column": "near"},
               {"step": "center", "column": "w2"}, {"step": "restore", "column": "w3"}]
    paths = []
    for payload in changes:
        assert step(client, sid, payload).status_code == 200
        got = check(client, sid, table)
        paths.append(got.path)
        assert len(got.diagnosis["correlations"]["columns"]) > OPTIMAL_ORDER_LIMIT
        assert got.diagnosis["correlations"]["spearman"] is None
    assert paths[1:] == ["factor"] * (len(changes) - 1)
    # the planted relation, found on the factor path as on the rows
    deps = got.diagnosis["dependencies"]
    assert len(deps) == 1
    assert {"w1", "w2 (centered)", "w3"} <= {deps[0]["column"], *deps[0]["combination"]}


def test_a_near_dependency_at_the_rank_cut_keeps_a_nonsingular_basis(client) -> None:
    """Found by the upload fuzz test: after the response moves out of X, the factor's null
    space carries noise of about tol/σ_r (σ_r ≈ 1e-8 from a column of 89012389 beside a
    0/1 column); that noise once put an independent column on the left of an equation, the
    basis was singular and the analysis failed. Reference: the exact rank and independent
    columns by rational elimination on the stored floats (tests/core/exact.py)."""
    from tests.core import exact

    data = b"0,1,2,3,c\n0,0,0,0,0\n1,0,0,1,0\n0,1,35,89012389,9\n"
    r = client.post("/api/upload", files={"file": ("table.csv", data, "text/csv")})
    assert r.status_code == 201, r.text
    sid = r.json()["session"]
    done = client.post(f"/api/s/{sid}/changes?html=0",
                       json={"kind": "step", "payload": {"step": "response", "column": "0"}})
    assert done.status_code == 200, done.text
    rows = np.array([[0, 0, 0, 0], [0, 0, 1, 0], [1, 35, 89012389, 9]], dtype=float)
    cols = [exact.ones(3), *exact.columns_of(rows)]
    assert done.json()["rank"] == exact.rank(cols) == 3
    diag = client.get(f"/api/s/{sid}/diagnosis").json()
    assert sorted(r["column"] for r in diag["dependencies"]) == ["2", "c"]  # 2 = 35·1, c = 9·1
    check(client, sid, client.app.state.analyst.session(sid).table)
