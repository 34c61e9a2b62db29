"""Browser tests of the views opened on request: the previewed remedies (sorting, Apply gives
exactly the previewed figures) and the rows behind the conditioning (the chart draws, the
planted rows are listed). References: the analysis after the change (the page itself after
Apply) and rows planted in the file."""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

from tests.browser.test_inspect import open_demo


def _open(page, selector: str) -> None:
    page.click(f"{selector} > summary")
    page.wait_for_selector(f"{selector} .insight-body table, {selector} .insight-body .ok")


def test_remedy_table_sorts_and_apply_gives_the_previewed_figures(page) -> None:
    open_demo(page)
    _open(page, 'details[data-insight="remedies"]')
    rows = page.locator("#remedy-table tbody tr")
    assert rows.count() >= 6
    # Sorting by the condition number puts finite values before infinite ones.
    page.click('#remedy-table th button:text("Condition number")')
    values = page.locator("#remedy-table tbody tr td:nth-child(4)").evaluate_all(
        "cells => cells.map(c => c.dataset.value)")
    nums = [float("inf") if v == "Infinity" else float(v) for v in values]
    assert nums == sorted(nums) or nums == sorted(nums, reverse=True)
    # Apply the first single-change remedy whose preview leaves one dependency less.
    first = page.locator('#remedy-table tr.remedy:has(button[data-change])').first
    rank_text = first.locator("td").nth(0).inner_text()
    after_rank, after_cols = (int(x) for x in re.findall(r"\d+", rank_text)[:2])
    first.locator("button[data-change]").click()
    page.wait_for_selector('#workspace[data-position="2"]')
    card = page.locator(".card .card-sub").first.inner_text()
    assert f"of {after_cols} columns" in card
    value = page.locator(".card .card-value").first.inner_text()
    assert int(re.findall(r"\d+", value)[0]) == after_rank


def test_rows_behind_the_conditioning_lists_the_planted_rows(page, tmp_path) -> None:
    rng = np.random.default_rng(8)
    n = 200
    a, b, c, y = rng.normal(size=(4, n))
    planted = [30, 111, 170]
    big = rng.uniform(250, 350, 3)
    a[planted] = big
    b[planted] = big * (1 + rng.normal(0, 1e-3, 3))
    path = tmp_path / "planted_rows.csv"
    pd.DataFrame({"a": a, "b": b, "c": c, "y": y}).to_csv(path, index=False)
    page.goto("/")
    page.set_input_files("#file-input", str(path))
    page.wait_for_url(re.compile(r"/s/[^/]+$"))
    page.select_option("#response-choice", "y")
    with page.expect_navigation():
        page.click("text=Use as response")
    page.click("#go-inspect")
    page.wait_for_selector("#workspace")
    _open(page, 'details[data-insight="influence"]')
    page.wait_for_function("() => document.querySelector('#fig-influence .main-svg')")
    # Rows count from 1 in the table: planted row i is table row i + 1.
    listed = page.locator("table.influence-rows").first.locator("tbody tr").evaluate_all(
        "rows => rows.map(r => Number(r.dataset.row))")
    assert set(listed[:3]) == {i + 1 for i in planted}
