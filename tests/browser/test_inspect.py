"""Browser tests on the demo file: upload, planted dependencies, a remedy with undo, pinned
fits compared, the Spearman switch. References: unit definitions, statsmodels, scipy."""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from scipy.stats import spearmanr

from tests.browser.conftest import demo_path

DEMO = demo_path()
RESPONSE = "energy_kwh"


def open_demo(page, shots=None) -> None:
    """Upload the demo file, choose the response, and open the inspection view."""
    page.goto("/")
    if shots:
        page.screenshot(path=str(shots / "upload.png"))
    page.set_input_files("#file-input", str(DEMO))
    page.wait_for_url(re.compile(r"/s/[^/]+$"))
    page.select_option("#response-choice", RESPONSE)
    with page.expect_navigation():
        page.click("text=Use as response")
    if shots:
        page.screenshot(path=str(shots / "overview.png"), full_page=True)
    page.click("#go-inspect")
    page.wait_for_selector("#workspace")
    page.wait_for_function(
        "() => window.Plotly && document.querySelector('#fig-inflation .main-svg')")


def reference_rows(cols: list[str] | None = None) -> pd.DataFrame:
    """The demo rows complete in the columns used (all but the date by default): listwise
    deletion, as the design does."""
    df = pd.read_csv(DEMO)
    used = cols or [c for c in df.columns if c != "date"]
    return df.dropna(subset=used).reset_index(drop=True)


def ols(cols: list[str]):
    df = reference_rows(["site", RESPONSE, *cols])
    site = pd.get_dummies(df["site"], prefix="site", dtype=float).drop(columns="site_Millbrook")
    X = pd.concat([pd.Series(1.0, index=df.index, name="const"), site, df[cols]], axis=1)
    return sm.OLS(df[RESPONSE].astype(float), X.astype(float)).fit()


def test_planted_dependencies_remedy_and_undo(page, artifacts) -> None:
    open_demo(page, artifacts)
    deps = page.locator("#dependency-list .equation").all_inner_texts()
    # references: NIST SP 811 App. B.8 (°F = 32 + 1.8·°C); the 1959 pound (0.45359237 kg);
    # pallets moved = in + out (the count of movements, by definition)
    assert "outdoor_temp_f = 32·(intercept) + 1.8·outdoor_temp_c" in deps
    assert "goods_in_kg = 0.45359237·goods_in_lb" in deps
    assert "pallets_moved = pallets_in + pallets_out" in deps
    page.screenshot(path=str(artifacts / "inspect.png"), full_page=True)
    vif_c = page.locator('#vif-table tr[data-column="outdoor_temp_c"] td.vif')
    assert vif_c.inner_text() == "∞"
    rank_sub = page.locator(".card .card-sub").first
    assert "of 15 columns · 3 short" in rank_sub.inner_text()

    page.click('li.dependency[data-column="outdoor_temp_f"] button:text("Drop outdoor_temp_f")')
    page.wait_for_selector('#workspace[data-position="2"]')
    assert "of 14 columns · 2 short" in page.locator(".card .card-sub").first.inner_text()
    assert page.locator("#dependency-list .dependency").count() == 2
    # reference: without °F, °C is tied to nothing; its VIF is finite (1/(1 − R²) < ∞)
    assert vif_c.inner_text() not in ("∞", "")
    page.screenshot(path=str(artifacts / "after-remedy.png"), full_page=True)

    page.click('button[data-action="undo"]')
    page.wait_for_selector('#workspace[data-position="1"]')
    assert page.locator("#dependency-list .dependency").count() == 3
    assert vif_c.inner_text() == "∞"
    # A bad step shows a message and keeps the session as it was.
    page.click("text=Rescale a column")
    page.select_option("#ctl-scale-how", "multiply")
    page.select_option("#ctl-scale-col", "humidity_pct")
    page.fill("#ctl-scale-by", "0")
    page.click("text=Rescale >> nth=-1")
    page.wait_for_selector("#notice:not([hidden])")
    assert "multiply by 0" in page.inner_text("#notice-text")
    assert page.get_attribute("#workspace", "data-position") == "1"


def test_pin_and_compare_two_fits(page, artifacts) -> None:
    open_demo(page)
    for col in ("outdoor_temp_f", "goods_in_kg", "pallets_moved"):
        pos = int(page.get_attribute("#workspace", "data-position"))
        page.click(f'li.dependency[data-column="{col}"] button:text("Drop {col}")')
        page.wait_for_selector(f'#workspace[data-position="{pos + 1}"]')
    assert page.locator("#no-dependencies").count() == 1
    page.fill("#pin-label", "all flows")
    page.click("#pin-form button")
    page.wait_for_selector("#pin-list")
    pos = int(page.get_attribute("#workspace", "data-position"))
    page.click('#predictor-list li[data-column="door_openings"] button')
    page.wait_for_selector(f'#workspace[data-position="{pos + 1}"]')
    # The comparison defaults to the newest pin against the current fit.
    row = page.locator('#compare-table tr[data-column="pallets_in"] td.se-factor')
    base = ["outdoor_temp_c", "humidity_pct", "sunshine_hours", "goods_in_lb", "pallets_in",
            "pallets_out", "defrost_cycles"]
    a = ols(base[:6] + ["door_openings", "defrost_cycles"])
    b = ols(base)
    factor = b.bse["pallets_in"] / a.bse["pallets_in"]  # reference: statsmodels OLS
    assert f"{factor:.3g}×" in row.inner_text()
    assert "not in B" in page.locator('#compare-table tr[data-column="door_openings"]').inner_text()
    page.locator("#sec-compare").screenshot(path=str(artifacts / "compare.png"))


def test_heatmap_switches_to_spearman(page, artifacts) -> None:
    open_demo(page)
    page.wait_for_function("() => document.querySelector('#fig-heatmap .main-svg')")
    page.check('input[name="corr-method"][value="spearman"]')
    page.wait_for_selector('#fig-heatmap[data-method="spearman"]')
    title = page.evaluate("() => document.getElementById('fig-heatmap').layout.title.text")
    assert title.startswith("Spearman")
    trace = page.evaluate("() => { const t = document.getElementById('fig-heatmap').data[0];"
                          " return {x: t.x, z: t.z}; }")
    i, j = trace["x"].index("goods_in_lb"), trace["x"].index("pallets_in")
    df = reference_rows()
    # reference: scipy.stats.spearmanr on the rows the design uses
    assert trace["z"][i][j] == pytest.approx(spearmanr(df["goods_in_lb"], df["pallets_in"])[0],
                                            abs=1e-9)
    assert not np.isclose(trace["z"][i][j], df["goods_in_lb"].corr(df["pallets_in"]))
    page.locator("#sec-correlations").screenshot(path=str(artifacts / "heatmap-spearman.png"))
