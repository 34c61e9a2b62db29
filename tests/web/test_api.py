"""API tests for every route of the inspection app, against outside references: unit
definitions for the exact dependencies, statsmodels OLS for fits, numpy for rank and
textbook VIF, RFC 9110 for status codes, the plotly package for the served script."""

from __future__ import annotations

import re
from importlib import resources

import numpy as np
import pytest
import statsmodels.api as sm

from tests.web.conftest import step, to_csv

INT = "(intercept)"


def design(table: dict, cols: list[str]) -> np.ndarray:
    """The design the app should build: intercept, region indicators against 'north'
    (first level in sorted order), then numeric columns."""
    n = len(table["load"])
    parts = [np.ones(n)]
    names = [INT]
    for c in cols:
        if c == "region":
            for lv in ("south", "west"):
                parts.append(np.array([r == lv for r in table["region"]], dtype=float))
                names.append(f"region[{lv}]")
        else:
            parts.append(np.asarray(table[c], dtype=float))
            names.append(c)
    return np.column_stack(parts), names


def diag(client, sid: str) -> dict:
    r = client.get(f"/api/s/{sid}/diagnosis")
    assert r.status_code == 200
    return r.json()


def test_upload_lists_unit_dependencies(client, sid) -> None:
    d = diag(client, sid)
    eqs = {dep["column"]: dep["combination"] for dep in d["dependencies"]}
    # reference: NIST SP 811 App. B.8, t/°F = 1.8·t/°C + 32
    assert eqs["temp_f"] == pytest.approx({INT: 32.0, "temp_c": 1.8}, rel=1e-9)
    # reference: the 1959 international pound, 1 lb = 0.45359237 kg exactly
    assert eqs["mass_kg"] == pytest.approx({"mass_lb": 0.45359237}, rel=1e-9)
    page = client.get(f"/s/{sid}/inspect").text
    assert "temp_f = 32·(intercept) + 1.8·temp_c" in page
    assert "mass_kg = 0.45359237·mass_lb" in page


def test_rank_matches_numpy(client, sid, table) -> None:
    X, names = design(table, ["temp_c", "temp_f", "mass_lb", "mass_kg", "hours", "region"])
    d = diag(client, sid)
    assert sorted(d["columns"]) == sorted(names)
    # reference: numpy.linalg.matrix_rank (SVD, the same default tolerance rule)
    assert d["rank"] == np.linalg.matrix_rank(X)
    assert f'id="rank-value">{d["rank"]}<' in client.get(f"/s/{sid}/workspace").text


def test_drop_remedy_then_fit_matches_statsmodels(client, sid, table) -> None:
    for col in ("temp_f", "mass_kg"):
        r = step(client, sid, {"step": "drop", "column": col})
        assert r.status_code == 200, r.text
    d = diag(client, sid)
    assert d["dependencies"] == [] and d["full_rank"]
    X, names = design(table, ["temp_c", "mass_lb", "hours", "region"])
    ref = sm.OLS(np.asarray(table["load"]), X).fit()  # reference: statsmodels OLS
    fit = d["fit"]
    for j, c in enumerate(names):
        assert fit["coefficients"][c] == pytest.approx(ref.params[j], rel=1e-8)
        assert fit["std_errors"][c] == pytest.approx(ref.bse[j], rel=1e-8)
    assert fit["r_squared"] == pytest.approx(ref.rsquared, rel=1e-10)
    page = client.get(f"/s/{sid}/workspace").text
    # The page shows 4 significant digits of the same numbers.
    assert f"{ref.params[names.index('hours')]:.4g}" in page


def test_vif_matches_textbook_definition(client, sid, table) -> None:
    step(client, sid, {"step": "drop", "column": "temp_f"})
    step(client, sid, {"step": "drop", "column": "mass_kg"})
    d = diag(client, sid)
    X, names = design(table, ["temp_c", "mass_lb", "hours", "region"])
    for j, c in enumerate(names):
        if c == INT:
            continue
        others = np.delete(X, j, axis=1)
        coef, *_ = np.linalg.lstsq(others, X[:, j], rcond=None)
        resid = X[:, j] - others @ coef
        r2 = 1 - resid @ resid / np.sum((X[:, j] - X[:, j].mean()) ** 2)
        # reference: VIF_j = 1/(1 − R_j²) (Marquardt, Technometrics 12, 1970)
        assert d["vif"][c] == pytest.approx(1 / (1 - r2), rel=1e-7)
    assert d["vif"] and all(v is not None for v in d["vif"].values())


def test_keep_instead_rewrites_the_relation(client, sid) -> None:
    r = step(client, sid, {"column": "temp_f"}, kind="keep")
    assert r.status_code == 200, r.text
    eqs = {dep["column"]: dep["combination"] for dep in diag(client, sid)["dependencies"]}
    # reference: solving t_F = 32 + 1.8·t_C for t_C gives t_C = −160/9 + (5/9)·t_F
    assert eqs["temp_c"] == pytest.approx({INT: -160 / 9, "temp_f": 5 / 9}, rel=1e-9)


def test_undo_redo_walk_the_history(client, sid, table) -> None:
    before = diag(client, sid)
    step(client, sid, {"step": "drop", "column": "temp_f"})
    X, _ = design(table, ["temp_c", "mass_lb", "mass_kg", "hours", "region"])
    # reference: numpy.linalg.matrix_rank of the design without temp_f
    assert diag(client, sid)["rank"] == np.linalg.matrix_rank(X)
    r = client.post(f"/api/s/{sid}/undo")
    assert r.status_code == 200 and r.json()["position"] == 1
    assert diag(client, sid) == before
    r = client.post(f"/api/s/{sid}/redo")
    assert r.json()["position"] == 2
    assert "temp_f" not in diag(client, sid)["columns"]
    # Nothing left to redo: a clear 4xx (reference: RFC 9110 §15.5, client errors).
    r = client.post(f"/api/s/{sid}/redo")
    assert r.status_code == 400 and "nothing to redo" in r.json()["error"]


def test_a_change_says_where_the_servers_time_went(client, sid) -> None:
    """The answer to a change or an undo carries a Server-Timing header (reference: W3C
    Server Timing, the server-timing-metric grammar name;dur=milliseconds)."""
    for r in (step(client, sid, {"step": "drop", "column": "temp_f"}),
              client.post(f"/api/s/{sid}/undo")):
        assert r.status_code == 200
        spans = dict(part.strip().split(";dur=") for part in
                     r.headers["server-timing"].split(","))
        assert set(spans) == {"change", "page"}
        assert all(float(v) >= 0 for v in spans.values())


@pytest.mark.parametrize("payload", [
    {"step": "drop", "column": "no_such_column"},
    {"step": "log", "column": "temp_c"},  # temp_c has values ≤ 0 (°C below freezing)
    {"step": "combine", "columns": ["hours"], "method": "sum", "name": "x"},
    {"step": "teleport"},
])
def test_failing_step_leaves_history_unchanged(client, sid, payload) -> None:
    before = client.get(f"/api/s/{sid}/history").json()
    d_before = diag(client, sid)
    r = step(client, sid, payload)
    # reference: RFC 9110 §15.5.1, 400 for a request the client must change
    assert r.status_code == 400
    assert r.json()["error"]
    assert client.get(f"/api/s/{sid}/history").json() == before
    assert diag(client, sid) == d_before


def test_failing_step_after_undo_keeps_the_redo_tail(client, sid) -> None:
    step(client, sid, {"step": "drop", "column": "temp_f"})
    client.post(f"/api/s/{sid}/undo")
    before = client.get(f"/api/s/{sid}/history").json()
    assert step(client, sid, {"step": "drop", "column": "nope"}).status_code == 400
    after = client.get(f"/api/s/{sid}/history").json()
    # reference: the history as it was before the refused request
    assert after == before and len(after["changes"]) == 2


@pytest.mark.parametrize("name,data", [
    ("empty.csv", b""),
    ("garbage.csv", bytes(range(256)) * 40),
    ("table.xlsx", b"a,b\n1,2\n3,5\n"),  # CSV text under an Excel name
    ("table.json", b'[{"a": 1, "b": 2}]'),
    ("photo.png", b"\x89PNG\r\n\x1a\n" + bytes(200)),
    ("header_only.csv", b"a,b,c\n"),
])
def test_bad_uploads_get_a_message_not_a_500(client, name, data) -> None:
    r = client.post("/api/upload", files={"file": (name, data, "application/octet-stream")})
    # reference: RFC 9110 §15.5 (client error), not §15.6 (server error)
    assert 400 <= r.status_code < 500, r.text
    assert len(r.json()["error"]) > 10


def test_upload_without_file_is_a_client_error(client) -> None:
    r = client.post("/api/upload")
    assert 400 <= r.status_code < 500  # reference: RFC 9110 §15.5


@pytest.mark.parametrize("body", [{"kind": "nope", "payload": {}}, {"kind": "step"}, [1, 2]])
def test_malformed_change_is_refused(client, sid, body) -> None:
    r = client.post(f"/api/s/{sid}/changes", json=body)
    assert r.status_code == 400 and r.json()["error"]  # reference: RFC 9110 §15.5.1


def test_change_body_not_json(client, sid) -> None:
    r = client.post(f"/api/s/{sid}/changes", content=b"{not json",
                    headers={"content-type": "application/json"})
    assert r.status_code == 400  # reference: RFC 9110 §15.5.1


@pytest.mark.parametrize("penalty", [-1, "abc", True])
def test_bad_ridge_penalty_is_refused(client, sid, penalty) -> None:
    r = step(client, sid, {"penalty": penalty}, kind="ridge")
    assert r.status_code == 400 and "ridge penalty" in r.json()["error"]  # RFC 9110 §15.5.1


def test_ridge_penalty_shows_the_path(client, sid, table) -> None:
    step(client, sid, {"step": "drop", "column": "temp_f"})
    step(client, sid, {"step": "drop", "column": "mass_kg"})
    r = step(client, sid, {"penalty": 0.0}, kind="ridge")
    assert r.status_code == 200
    d = diag(client, sid)
    chosen = d["ridge"]["chosen"]
    X, names = design(table, ["temp_c", "mass_lb", "hours", "region"])
    ref = sm.OLS(np.asarray(table["load"]), X).fit()
    # reference: at λ = 0 ridge is least squares (Hoerl & Kennard 1970), here statsmodels OLS
    for j, c in enumerate(names[1:], start=1):
        assert chosen["coefficients"][c] == pytest.approx(ref.params[j], rel=1e-7)
    assert 'id="sec-ridge"' in r.json()["html"]
    assert client.get(f"/api/s/{sid}/history").json()["ridge_penalty"] == 0.0


def test_pin_and_compare_standard_error_factors(client, sid, table) -> None:
    step(client, sid, {"step": "drop", "column": "temp_f"})
    step(client, sid, {"step": "drop", "column": "mass_kg"})
    assert client.post(f"/api/s/{sid}/pins", json={"label": "all columns"}).status_code == 201
    step(client, sid, {"step": "drop", "column": "hours"})
    y = np.asarray(table["load"])
    Xa, na = design(table, ["temp_c", "mass_lb", "hours", "region"])
    Xb, nb = design(table, ["temp_c", "mass_lb", "region"])
    ra, rb = sm.OLS(y, Xa).fit(), sm.OLS(y, Xb).fit()  # reference: statsmodels OLS
    html = client.get(f"/s/{sid}/compare", params={"a": "pin:1", "b": "current"}).text
    assert "all columns" in html and "not in B" in html
    for col in ("temp_c", "mass_lb"):
        factor = rb.bse[nb.index(col)] / ra.bse[na.index(col)]
        row = re.search(rf'<tr data-column="{col}".*?data-factor="([^"]*)"', html, re.S)
        assert float(row.group(1)) == pytest.approx(factor, rel=1e-8)
    # Previous versus current: the same pair of fits here.
    html2 = client.get(f"/s/{sid}/compare", params={"a": "previous", "b": "current"}).text
    assert "not in B" in html2
    r = client.delete(f"/api/s/{sid}/pins/1")
    assert r.status_code == 200
    assert client.delete(f"/api/s/{sid}/pins/1").status_code == 400  # RFC 9110 §15.5.1


def test_pin_without_response_is_refused(client, table) -> None:
    r = client.post("/api/upload", files={"file": ("u.csv", to_csv(table), "text/csv")})
    s = r.json()["session"]
    r = client.post(f"/api/s/{s}/pins", json={})
    assert r.status_code == 400 and "response" in r.json()["error"]  # RFC 9110 §15.5.1


def test_spearman_figure_matches_scipy(client, sid, table) -> None:
    from scipy.stats import spearmanr

    figs = client.get(f"/api/s/{sid}/figures").json()
    fig = figs["heatmap-spearman"]
    labels = fig["data"][0]["x"]
    z = fig["data"][0]["z"]
    i, j = labels.index("temp_c"), labels.index("hours")
    # reference: scipy.stats.spearmanr on the uploaded columns
    assert z[i][j] == pytest.approx(spearmanr(table["temp_c"], table["hours"])[0], abs=1e-9)


def test_pages_and_fragments_render(client, sid, table) -> None:
    assert "Open a table" in client.get("/").text
    ov = client.get(f"/s/{sid}")
    assert ov.status_code == 200
    # reference: the CSV itself has 60 rows and 3 regions
    assert "60 rows" in ov.text and "levels" in ov.text
    for path in (f"/s/{sid}/inspect", f"/s/{sid}/workspace", f"/s/{sid}/compare"):
        assert client.get(path).status_code == 200
    h = client.get(f"/api/s/{sid}/history").json()
    assert h["recipe"] == [{"step": "response", "column": "load"}]


def test_overview_kind_override(client, sid) -> None:
    r = step(client, sid, {"step": "kind", "column": "hours", "to": "categorical"})
    assert r.status_code == 200
    d = diag(client, sid)
    assert any(c.startswith("hours[") for c in d["columns"])
    assert "hours" in d["gvif"]


def test_unknown_session_is_404(client) -> None:
    # reference: RFC 9110 §15.5.5 (404 Not Found)
    assert client.get("/s/nope/inspect").status_code == 404
    assert client.get("/api/s/nope/diagnosis").status_code == 404
    assert client.post("/api/s/nope/undo").status_code == 404


def test_assets_are_local(client) -> None:
    r = client.get("/assets/plotly.min.js")
    ref = (resources.files("plotly") / "package_data" / "plotly.min.js").read_bytes()
    assert r.status_code == 200 and r.content == ref  # reference: the plotly package's file
    assert client.get("/static/rankscope.js").status_code == 200
    assert client.get("/static/rankscope.css").status_code == 200
    page = client.get("/").text + client.get("/s/x/inspect").text
    assert "http://" not in page and "https://" not in page  # nothing fetched from elsewhere


def test_all_levels_dependency_offers_a_reference_level(client, sid) -> None:
    r = step(client, sid, {"step": "indicators", "column": "region", "reference": "all"})
    assert r.status_code == 200
    deps = diag(client, sid)["dependencies"]
    rel = next(d for d in deps if d["column"].startswith("region["))
    # reference: the indicators of a partition of the rows sum to the constant 1
    levels = {"region[north]", "region[south]", "region[west]"}
    assert set(rel["combination"]) | {rel["column"]} == levels | {INT}
    assert rel["combination"][INT] == pytest.approx(1.0)
    level = rel["column"][len("region["):-1]
    assert f"Make {level} the reference level" in r.json()["html"]


def test_keep_for_a_column_outside_the_design_is_refused(client, sid) -> None:
    before = client.get(f"/api/s/{sid}/history").json()
    r = step(client, sid, {"column": "nope"}, kind="keep")
    assert r.status_code == 400 and "nope" in r.json()["error"]  # RFC 9110 §15.5.1
    assert client.get(f"/api/s/{sid}/history").json() == before


def test_dropping_a_kept_column_still_works(client, sid) -> None:
    assert step(client, sid, {"column": "temp_f"}, kind="keep").status_code == 200
    r = step(client, sid, {"step": "drop", "column": "temp_f"})
    assert r.status_code == 200, r.text
    d = diag(client, sid)
    # reference: the 1959 pound; without temp_f only the pound relation remains
    assert [dep["column"] for dep in d["dependencies"]] == ["mass_kg"]
