"""The formula box on the columns page, in Chromium: a formula opens a new session on its
columns, whose inspection names the planted dependencies in the formula's names."""

from __future__ import annotations

import re

from tests.browser.conftest import demo_path

DEMO = demo_path()


def test_formula_box_starts_a_session_from_the_formula(page) -> None:
    page.goto("/")
    page.set_input_files("#file-input", str(DEMO))
    page.wait_for_url(re.compile(r"/s/[^/]+$"))
    first = page.url
    page.fill("#formula-text", "energy_kwh ~ outdoor_temp_c + outdoor_temp_f + C(site)")
    with page.expect_navigation():
        page.click("text=Start from the formula")
    assert page.url != first and re.search(r"/s/[^/]+$", page.url)
    rows = page.locator("#overview-table tbody th").all_inner_texts()
    assert any(r.startswith("C(site)[T.Quayside]") for r in rows)
    page.click("#go-inspect")
    page.wait_for_selector("#workspace")
    deps = page.locator("#dependency-list .equation").all_inner_texts()
    # reference: NIST SP 811 App. B.8 (°F = 32 + 1.8·°C)
    assert deps == ["outdoor_temp_f = 32·(intercept) + 1.8·outdoor_temp_c"]


def test_formula_box_says_what_is_wrong(page) -> None:
    page.goto("/")
    page.set_input_files("#file-input", str(DEMO))
    page.wait_for_url(re.compile(r"/s/[^/]+$"))
    page.fill("#formula-text", "energy_kwh ~ outdoor_tmp_c")
    page.click("text=Start from the formula")
    notice = page.locator("#notice-text")
    notice.wait_for()
    assert 'no column named "outdoor_tmp_c"' in notice.inner_text()
    assert '"outdoor_temp_c"' in notice.inner_text()
