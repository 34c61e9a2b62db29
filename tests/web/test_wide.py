"""The page of a wide design (more than WIDE_COLUMNS columns) and its routes: the lead section,
paged tables, CSV downloads, correlations block by block. Random data with planted structure;
references: °F = 32 + 1.8·°C (NIST SP 811 App. B.8), numpy.corrcoef and numpy.linalg.lstsq
(the textbook VIF 1/(1 − R²)), scipy.stats.spearmanr, the variance-decomposition proportions
of each column summing to 1 (Belsley, Kuh & Welsch, Regression Diagnostics, 1980, §3.2)."""

from __future__ import annotations

import csv
import io
import json
import re

import numpy as np
import pandas as pd
import pytest
from fastapi.testclient import TestClient
from scipy.stats import spearmanr

from rankscope.web.app import create_app
from rankscope.web.rendering.paging import MOST_ROWS
from rankscope.web.rendering.wide import WIDE_COLUMNS
from tests.web.conftest import step, to_csv, units_table


def wide_csv(n: int = 240, levels: int = 60, seed: int = 11) -> bytes:
    """A category `store` of `levels` levels with `region` nested in it (each region's
    indicator is the sum of its stores': exact relations), °C and °F, a planted group of
    three (load_*), a planted pair (flow_*), noise and a response y."""
    rng = np.random.default_rng(seed)
    store = rng.permutation(np.arange(n) % levels)
    temp = rng.normal(10, 5, n)
    a, b = rng.normal(size=n), rng.normal(size=n)
    frame = pd.DataFrame({
        "store": [f"s{i:03d}" for i in store], "region": [f"r{i % 5}" for i in store],
        "temp_c": temp, "temp_f": 32 + 1.8 * temp,
        "load_a": a, "load_b": a + 0.3 * rng.normal(size=n),
        "load_c": a + 0.5 * rng.normal(size=n),
        "flow_a": b, "flow_b": -b + 0.2 * rng.normal(size=n), "noise": rng.normal(size=n),
    })
    frame["y"] = 2 * temp + a - b + rng.normal(size=n)
    return frame.to_csv(index=False).encode()


@pytest.fixture(scope="module")
def app_client() -> TestClient:
    return TestClient(create_app())


@pytest.fixture(scope="module")
def wide_sid(app_client: TestClient) -> str:
    r = app_client.post("/api/upload", files={"file": ("wide.csv", wide_csv(), "text/csv")})
    assert r.status_code == 201, r.text
    sid = r.json()["session"]
    assert step(app_client, sid, {"step": "response", "column": "y"}).status_code == 200
    return sid


def design_of(client: TestClient, sid: str) -> pd.DataFrame:
    """The design as the app builds it, read back from its own CSV download."""
    r = client.get(f"/api/s/{sid}/export/design")
    assert r.status_code == 200
    return pd.read_csv(io.StringIO(r.text))


def figure_data(html: str) -> dict:
    m = re.search(r'<script type="application/json" id="figure-data">(.*?)</script>', html, re.S)
    assert m
    return json.loads(m.group(1))


def test_wide_page_leads_with_the_columns_that_matter(app_client, wide_sid) -> None:
    html = app_client.get(f"/s/{wide_sid}/inspect").text
    d = app_client.get(f"/api/s/{wide_sid}/diagnosis").json()
    assert len(d["columns"]) > WIDE_COLUMNS
    assert html.index('id="sec-focus"') < html.index('id="sec-exact"')
    focus = html[html.index('id="sec-focus"'):html.index('id="sec-exact"')]
    relations = re.search(r'id="focus-relations">(.*?)</p>', focus, re.S).group(1)
    # reference: °F = 32 + 1.8·°C (with the intercept), and each of the 4 regions beside
    # the reference one is the sum of its 12 stores: 5 equations on 3 + 4 + 48 columns.
    assert relations.startswith("55 columns take part in the 5")
    assert "<code class=\"name\">temp_f</code>" in relations
    groups = re.findall(r"<li data-block=\"\d+\">(.*?)</li>", focus, re.S)
    assert any(all(f">{c}<" in g for c in ("load_a", "load_b", "load_c")) for g in groups)
    assert any(all(f">{c}<" in g for c in ("flow_a", "flow_b")) for g in groups)
    # The largest finite VIF is flow_a's or flow_b's (r near −0.98); reference: 1/(1 − R²)
    # with R² from numpy.linalg.lstsq of the column on all the others.
    first = re.search(r'id="focus-vif".*?<tr data-column="([^"]+)"', focus, re.S).group(1)
    X = design_of(app_client, wide_sid).drop(columns=["y"])
    target = X[first].to_numpy()
    others = X.drop(columns=[first]).to_numpy()
    fitted = others @ np.linalg.lstsq(others, target, rcond=None)[0]
    r2 = 1 - np.sum((target - fitted) ** 2) / np.sum((target - target.mean()) ** 2)
    assert first in ("flow_a", "flow_b")
    assert d["vif"][first] == pytest.approx(1 / (1 - r2), rel=1e-6)
    # Reading help and the usual cautions sit beside the list.
    assert 'id="focus-help"' in focus and 'data-caution="omitted_variable"' in focus
    # No p × p table or figure is shipped; the block summary is.
    assert 'id="index-table"' not in html and "plotly.min.js" not in html
    figs = figure_data(html)
    assert "heatmap-pearson" not in figs and figs["blocks-pearson"]["data"][0]["type"] == "heatmap"


def test_a_narrow_page_is_as_before(client) -> None:
    r = client.post("/api/upload", files={"file": ("u.csv", to_csv(units_table()), "text/csv")})
    sid = r.json()["session"]
    html = client.get(f"/s/{sid}/inspect").text
    assert 'id="index-table"' in html and 'id="sec-focus"' not in html
    assert '<script src="/assets/plotly.min.js" defer></script>' in html
    assert figure_data(html)["heatmap-pearson"] is not None


def page(client, sid: str, name: str, **params) -> dict:
    r = client.get(f"/api/s/{sid}/tables/{name}", params=params)
    assert r.status_code == 200, r.text
    return r.json()


def test_vif_pages_sort_filter_and_page(app_client, wide_sid) -> None:
    d = app_client.get(f"/api/s/{wide_sid}/diagnosis").json()
    first = page(app_client, wide_sid, "vif")
    assert first["total"] == len(d["vif"]) and len(first["rows"]) == 25
    assert (first["sort"], first["order"]) == ("vif", "desc")
    # Largest first, infinite ones (exact relations) before any finite one.
    want = sorted(d["vif"], key=lambda c: -(np.inf if d["vif"][c] is None else d["vif"][c]))
    got = [r["column"] for r in first["rows"]]
    assert [d["vif"][c] is None for c in got] == [d["vif"][c] is None for c in want[:25]]
    every = []
    offset = 0
    while offset < first["total"]:
        every += page(app_client, wide_sid, "vif", sort="vif", order="asc", offset=offset,
                      limit=MOST_ROWS)["rows"]
        offset += MOST_ROWS
    finite = [d["vif"][r["column"]] for r in every if d["vif"][r["column"]] is not None]
    assert finite == sorted(finite) and len(every) == first["total"]
    assert every[-1]["mark"] == "infinite"
    names = page(app_client, wide_sid, "vif", sort="column", order="asc", q="LOAD")
    assert [r["column"] for r in names["rows"]] == ["load_a", "load_b", "load_c"]
    assert names["matched"] == 3
    assert page(app_client, wide_sid, "vif", limit=10_000)["limit"] == MOST_ROWS


def test_index_pages_name_the_high_proportions(app_client, wide_sid) -> None:
    d = app_client.get(f"/api/s/{wide_sid}/diagnosis").json()
    idx = page(app_client, wide_sid, "indices", limit=MOST_ROWS)
    assert idx["total"] == len(d["condition_indices"])
    flagged = [r for r in idx["rows"] if "flagged" in r["mark"].split()]
    assert len(flagged) == len(d["near_dependencies"])
    assert any("temp_f" in r["cells"][3] and "temp_c" in r["cells"][3] for r in flagged)
    only = page(app_client, wide_sid, "indices", q="temp_f")
    assert only["matched"] >= 1 and all("temp_f" in r["cells"][3] for r in only["rows"])


def test_pairs_come_strongest_first(app_client, wide_sid) -> None:
    X = design_of(app_client, wide_sid).drop(columns=["y"])
    X = X.loc[:, X.std() > 0]
    C = np.corrcoef(X.to_numpy(), rowvar=False)  # reference: numpy.corrcoef
    np.fill_diagonal(C, 0)
    pairs = page(app_client, wide_sid, "pairs", limit=5)
    assert pairs["total"] == C.shape[0] * (C.shape[0] - 1) // 2
    a, b, r, size = pairs["rows"][0]["cells"]
    assert float(size) == pytest.approx(np.abs(C).max(), abs=1e-3)
    assert {a, b} == {"temp_c", "temp_f"}
    flow = page(app_client, wide_sid, "pairs", q="flow_b", sort="r", order="asc")
    assert flow["rows"][0]["cells"][:2] == ["flow_a", "flow_b"] and float(
        flow["rows"][0]["cells"][2]) < -0.9


def test_bad_table_requests_get_a_message(app_client, wide_sid) -> None:
    for url in (f"/api/s/{wide_sid}/tables/nothing", f"/api/s/{wide_sid}/tables/vif?sort=x",
                f"/api/s/{wide_sid}/tables/vif?order=up",
                f"/api/s/{wide_sid}/tables/pairs?sort=column",
                f"/api/s/{wide_sid}/blocks?method=kendall", f"/api/s/{wide_sid}/blocks/999",
                f"/api/s/{wide_sid}/export/tables/nothing"):
        r = app_client.get(url)
        assert r.status_code == 400, url
        assert r.json()["error"]


def rows_of(text: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO(text)))


def test_complete_tables_download_as_csv(app_client, wide_sid) -> None:
    d = app_client.get(f"/api/s/{wide_sid}/diagnosis").json()
    r = app_client.get(f"/api/s/{wide_sid}/export/tables/indices")
    assert r.status_code == 200 and "attachment" in r.headers["content-disposition"]
    table = rows_of(r.text)
    assert table[0][:3] == ["dimension", "condition_index", "exact"]
    assert table[0][3:] == d["columns"] and len(table) == len(d["condition_indices"]) + 1
    props = np.array([[float(x) for x in row[3:]] for row in table[1:]])
    exact = np.array([row[2] == "true" for row in table[1:]])
    basis = np.array([c in d["basis"] for c in d["columns"]])
    # reference: over the dimensions of the basis design, each basis column's proportions
    # sum to 1 (BKW 1980 §3.2); one exact row per relation (as many as columns left out)
    assert props[~exact][:, basis].sum(axis=0) == pytest.approx(np.ones(basis.sum()),
                                                               abs=1e-9)
    assert exact.sum() == len(d["columns"]) - basis.sum() == len(d["dependencies"])
    corr = rows_of(app_client.get(f"/api/s/{wide_sid}/export/tables/correlations").text)
    names = corr[0][1:]
    X = design_of(app_client, wide_sid)[names].to_numpy()
    ref = np.corrcoef(X, rowvar=False)  # reference: numpy.corrcoef
    assert np.array([[float(x) for x in row[1:]] for row in corr[1:]]) == pytest.approx(
        ref, abs=1e-9)
    vif = {row[0]: row[1] for row in rows_of(
        app_client.get(f"/api/s/{wide_sid}/export/tables/vif").text)[1:]}
    assert vif["temp_f"] == "inf" and float(vif["noise"]) < 2
    fit = rows_of(app_client.get(f"/api/s/{wide_sid}/export/tables/fit").text)
    assert sum(row[5] == "true" for row in fit[1:]) == len(d["columns"]) - d["rank"]


def test_blocks_summary_and_one_block(app_client, wide_sid) -> None:
    X = design_of(app_client, wide_sid)
    summary = app_client.get(f"/api/s/{wide_sid}/blocks").json()
    blocks = summary["blocks"]
    members = []
    for b in blocks:
        one = app_client.get(f"/api/s/{wide_sid}/blocks/{b['number']}").json()
        assert len(one["columns"]) == b["size"]
        members.append(one["columns"])
    z = summary["figure"]["data"][0]["z"]
    for a, ca in enumerate(members):
        for b, cb in enumerate(members):
            # reference: numpy.corrcoef over both blocks, the largest |r| between them
            C = np.corrcoef(X[ca + cb].to_numpy(), rowvar=False)[:len(ca), len(ca):]
            if a == b:
                np.fill_diagonal(C, 0)
            if a == b and len(ca) == 1:
                assert z[a][b] is None
            else:
                assert abs(z[a][b]) == pytest.approx(np.abs(C).max(), abs=1e-9)
    group = next(b for b in blocks if b["group"] and b["size"] == 3)
    one = app_client.get(f"/api/s/{wide_sid}/blocks/{group['number']}",
                         params={"method": "spearman"}).json()
    assert sorted(one["columns"]) == ["load_a", "load_b", "load_c"]
    rho = spearmanr(X[one["columns"]].to_numpy()).statistic  # reference: scipy
    assert np.array(one["figure"]["data"][0]["z"]) == pytest.approx(rho, abs=1e-9)


def test_ridge_on_a_wide_design_draws_the_paths_that_move_most(app_client, wide_sid) -> None:
    """A ridge penalty on a thousand columns: the path figure draws the 30 paths that move
    most (each scaled by its largest size, as the narrow page's), the coefficients come a
    page at a time. Reference: the diagnosis' own ridge coefficients, ranked with numpy."""
    r = step(app_client, wide_sid, {"penalty": 0.5}, kind="ridge")
    try:
        assert r.status_code == 200
        html = r.json()["html"]
        assert 'id="ridge-table"' not in html and 'data-table="ridge"' in html
        ridge = app_client.get(f"/api/s/{wide_sid}/diagnosis").json()["ridge"]
        spread = {}
        for c in ridge["columns"]:
            path = np.asarray(ridge["coefficients"][c], dtype=float)
            big = np.max(np.abs(path))
            scaled = path / big if big > 0 else np.zeros_like(path)
            spread[c] = scaled.max() - scaled.min()
        drawn = [t["name"] for t in figure_data(html)["ridge"]["data"]]
        assert len(drawn) == 30
        assert min(spread[c] for c in drawn) >= max(spread[c] for c in spread
                                                    if c not in drawn)
        chosen = ridge["chosen"]
        first = page(app_client, wide_sid, "ridge", sort="ridge", order="desc")
        assert first["total"] == len(chosen["coefficients"]) + 1  # and the constant
        every = {**chosen["coefficients"], "(intercept)": chosen["constant"]}
        top = sorted(every, key=lambda c: -every[c])[:25]
        assert [row["column"] for row in first["rows"]] == top
    finally:
        step(app_client, wide_sid, {"penalty": None}, kind="ridge")


def test_a_change_answers_a_wide_fragment_and_compares_what_changed(app_client,
                                                                    wide_sid) -> None:
    r = step(app_client, wide_sid, {"step": "drop", "column": "noise"})
    assert r.status_code == 200
    html = r.json()["html"]
    assert 'id="sec-focus"' in html and 'id="index-table"' not in html
    rows = re.findall(r'<tr data-column="([^"]+)" class="status-', html)
    assert rows[0] == "noise" and len(rows) == 30
    assert 'id="compare-more"' in html
    step(app_client, wide_sid, {"step": "restore", "column": "noise"})


def test_markup_in_names_stays_text_on_the_wide_page(app_client) -> None:
    """A category level that is markup (not the reference level, which sorts first): escaped
    on the page, entities in Plotly labels, plain text in the JSON pages (the page writes it
    with textContent). Reference: HTML 5 named character references."""
    frame = pd.read_csv(io.BytesIO(wide_csv()))
    frame.loc[frame["store"] == "s001", "store"] = "z<img src=x onerror=alert(1)>"
    r = app_client.post("/api/upload", files={
        "file": ("markup.csv", frame.to_csv(index=False).encode(), "text/csv")})
    sid = r.json()["session"]
    html = app_client.get(f"/s/{sid}/inspect").text
    assert "<img src=x" not in html and "&lt;img src=x onerror=alert(1)&gt;" in html
    labels = json.dumps(figure_data(html)["blocks-pearson"])
    assert "<img" not in labels
    found = page(app_client, sid, "vif", q="img")
    assert found["rows"][0]["column"] == "store[z<img src=x onerror=alert(1)>]"
    for b in app_client.get(f"/api/s/{sid}/blocks").json()["blocks"]:
        one = app_client.get(f"/api/s/{sid}/blocks/{b['number']}").json()
        assert "<img" not in json.dumps(one["figure"]["data"][0]["x"])


def test_a_wide_basis_pages_the_shown_dimensions_and_downloads_them_all(app_client) -> None:
    """Past 200 basis columns the analysis keeps the proportions of the dimensions of index
    10 or more only (docs/json.md); the page says where the rest are, and the download
    computes them: each basis column's shares sum to 1 (BKW 1980 §3.2)."""
    r = app_client.post("/api/upload", files={
        "file": ("wider.csv", wide_csv(n=1100, levels=220, seed=5), "text/csv")})
    assert r.status_code == 201, r.text
    sid = r.json()["session"]
    assert step(app_client, sid, {"step": "response", "column": "y"}).status_code == 200
    d = app_client.get(f"/api/s/{sid}/diagnosis").json()
    given = [row is not None for row in d["variance_proportions"]]
    assert len(d["basis"]) >= 200 and 0 < sum(given) < len(given) // 4
    idx = page(app_client, sid, "indices", limit=MOST_ROWS)
    assert any("shares in the download" in row["cells"][3] for row in idx["rows"])
    assert any("temp_f" in r["cells"][3] for r in idx["rows"] if "flagged" in r["mark"])
    table = rows_of(app_client.get(f"/api/s/{sid}/export/tables/indices").text)
    props = np.array([[float(x) for x in row[3:]] for row in table[1:]])
    exact = np.array([row[2] == "true" for row in table[1:]])
    basis = np.array([c in d["basis"] for c in d["columns"]])
    assert not np.isnan(props).any()
    assert props[~exact][:, basis].sum(axis=0) == pytest.approx(np.ones(basis.sum()),
                                                               abs=1e-9)
    # the rows the analysis gave are the download's
    for k, row in enumerate(d["variance_proportions"]):
        if row is not None:
            assert props[k] == pytest.approx([row[c] for c in d["columns"]], abs=1e-12)
