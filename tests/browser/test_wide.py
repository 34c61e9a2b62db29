"""The page of a design with about 1,000 columns in Chromium: the implicated columns come first,
a full table is reachable and sorts, one block's heatmap opens, a change redraws (and keeps the
table's order). Random data with planted structure; references: °F = 32 + 1.8·°C (NIST SP 811
App. B.8), a nested category's indicators summing to the outer one's, and Python's sorted()."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import httpx
import numpy as np
import pandas as pd
import pytest

from rankscope.web.spawn import LiveServer

ROWS = 3_000
LEVELS = 985  # with 9 region indicators, 8 numeric columns and the intercept: 1,002 columns


def wide_table(path: Path, rows: int = ROWS, levels: int = LEVELS, seed: int = 17) -> Path:
    """`store` with `levels` levels (each one present), `region` nested in it, °C and °F,
    a planted group of three (load_*) and a pair (flow_*), and noise; no response."""
    rng = np.random.default_rng(seed)
    store = rng.permutation(np.arange(rows) % levels)
    temp = rng.normal(10, 5, rows)
    a, b = rng.normal(size=rows), rng.normal(size=rows)
    pd.DataFrame({
        "store": [f"s{i:04d}" for i in store], "region": [f"r{i % 10}" for i in store],
        "temp_c": temp, "temp_f": 32 + 1.8 * temp,
        "load_a": a, "load_b": a + 0.3 * rng.normal(size=rows),
        "load_c": a + 0.5 * rng.normal(size=rows),
        "flow_a": b, "flow_b": -b + 0.2 * rng.normal(size=rows),
        "noise": rng.normal(size=rows),
    }).to_csv(path, index=False)
    return path


@pytest.fixture(scope="module")
def wide_page(browser, tmp_path_factory) -> Iterator[tuple[object, str]]:
    """A real server in its own process (no time budget: the first analysis of 1,000
    columns may take a while on a busy machine) with the table uploaded; a browser tab."""
    folder = tmp_path_factory.mktemp("wide")
    table = wide_table(folder / "stores.csv")
    with LiveServer(folder / "data", "--time-budget", "0") as server:
        with table.open("rb") as f:
            r = httpx.post(server.url + "/api/upload",
                           files={"file": (table.name, f, "text/csv")}, timeout=600)
        assert r.status_code == 201, r.text
        context = browser.new_context(base_url=server.url,
                                      viewport={"width": 1400, "height": 1000})
        page = context.new_page()
        page.set_default_timeout(600_000)
        yield page, r.json()["session"]
        context.close()


def vif_names(page) -> list[str]:
    return page.locator("#vif-pages tbody tr").evaluate_all(
        "rows => rows.map(r => r.dataset.column)")


def test_wide_page_leads_sorts_and_redraws(wide_page) -> None:
    page, sid = wide_page
    page.goto(f"/s/{sid}/inspect")
    page.wait_for_selector('.paged[data-table="vif"][data-loaded]')
    columns = int(page.locator(".card-sub").first.inner_text().split(" columns")[0].split()[-1]
                  .replace(",", ""))
    assert columns > 1_000

    # The implicated columns come first: the lead section precedes every full table.
    assert page.evaluate("""() => {
      const lead = document.getElementById("sec-focus");
      const after = (id) => lead.compareDocumentPosition(document.getElementById(id)) &
        Node.DOCUMENT_POSITION_FOLLOWING;
      return ["sec-exact", "sec-near", "sec-inflation", "sec-correlations"].every(after);
    }""")
    relations = page.locator("#focus-relations").inner_text()
    assert "temp_f" in relations and "region[r1]" in relations  # the equations' left sides
    groups = page.locator("#focus-groups li").all_inner_texts()
    assert any(all(c in g for c in ("load_a", "load_b", "load_c")) for g in groups)
    assert page.locator("#focus-vif tbody tr").first.get_attribute("data-column") in (
        "flow_a", "flow_b")
    assert page.locator("#focus-help").is_visible()
    assert page.locator("#index-table").count() == 0

    # A full table is reachable and sorts on the server, a page at a time.
    assert len(vif_names(page)) == 25
    page.click('#vif-pages th button[data-key="column"]')
    page.wait_for_selector('.paged[data-table="vif"][data-sort="column"][data-order="asc"]')
    first_page = vif_names(page)
    assert first_page == sorted(first_page, key=str.lower) and first_page[0] == "flow_a"
    page.click('.paged[data-table="vif"] button[data-page="next"]')
    page.wait_for_function(
        "() => document.querySelector('.paged[data-table=\"vif\"] .paged-count')"
        ".textContent.startsWith('26')")
    second = vif_names(page)
    assert second[0].lower() > first_page[-1].lower()
    page.fill("#filter-vif", "temp")
    page.wait_for_function(
        "() => document.querySelectorAll('#vif-pages tbody tr').length === 2")
    assert vif_names(page) == ["temp_c", "temp_f"]
    page.fill("#filter-vif", "")
    page.wait_for_function(
        "() => document.querySelectorAll('#vif-pages tbody tr').length === 25")

    page.click("text=Every condition index with")
    page.wait_for_selector('.paged[data-table="indices"][data-loaded]')
    assert "exact" in page.locator("#indices-pages tbody tr").first.inner_text()

    # One group's own heatmap, with its names, on request.
    load_group = page.locator("#focus-groups li", has_text="load_a")
    load_group.locator("button[data-open-block]").click()
    page.wait_for_selector("#fig-block .main-svg")
    ticks = page.locator("#fig-block .xtick text").evaluate_all(
        "els => els.map(e => e.textContent)")
    assert sorted(ticks) == ["load_a", "load_b", "load_c"]
    page.wait_for_selector("#fig-blocks .main-svg")

    # A change redraws; the fragment it answers with stays small; the table keeps its order.
    fetched: list[str] = []
    page.on("request", lambda r: fetched.append(r.url))
    before = page.get_attribute("#workspace", "data-revision")
    with page.expect_response(lambda r: r.request.method == "POST"
                              and "/changes" in r.url) as answer:
        page.click('button[aria-label="Drop noise"]')
    page.wait_for_selector('#workspace[data-position="1"]')
    assert len(answer.value.body()) < 1_000_000
    page.wait_for_selector('.paged[data-table="vif"][data-sort="column"][data-loaded]')
    assert "noise" not in vif_names(page)
    assert f"of {columns - 1} columns" in page.locator(".card-sub").first.inner_text()
    page.wait_for_selector("#fig-blocks .main-svg")
    page.wait_for_selector('#fig-block[data-block] .main-svg')
    # Every figure shows the new state once in view (one out of view is drawn when scrolled
    # to), and the page's own change is not fetched a second time through the live feed.
    shows_new = """([id, key]) => {
      const el = document.getElementById(id);
      const figs = JSON.parse(document.getElementById("figure-data").textContent);
      return !el.dataset.pending && !!el.data &&
        JSON.stringify(el.data[0].z || el.data[0].y) ===
        JSON.stringify(figs[key].data[0].z || figs[key].data[0].y);
    }"""
    page.wait_for_function(shows_new, arg=["fig-blocks", "blocks-pearson"])
    page.locator("#sec-spectrum").scroll_into_view_if_needed()
    page.wait_for_function(shows_new, arg=["fig-spectrum", "spectrum"])
    # The feed may announce the state before this change after the change's own answer
    # came: that asks for nothing.
    page.evaluate("(r) => window.rankscope.announce(r)", before)
    page.wait_for_timeout(500)
    assert not [u for u in fetched if u.endswith("/workspace")]
