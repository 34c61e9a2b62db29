"""In real Chromium: the inspection view draws every figure under the server's
Content-Security-Policy (CSP Level 3) with no violation, a table whose names and cells are
markup fires no dialog and adds no element (HTML 5 escaping, Plotly entities), and the
downloaded HTML report draws under its own hash-only policy.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.browser.conftest import demo_path
from tests.web.markup_table import LEVELS, NAMES, RESPONSE, table_csv

FIGURES = ("#fig-inflation", "#fig-heatmap", "#fig-spectrum", "#fig-ridge")

#: Run before any page script (through DevTools, so the policy does not apply to it): keeps
#: every securitypolicyviolation event (CSP Level 3 §5.5) and any alert a payload might call.
WATCH = """
window.__violations = [];
document.addEventListener('securitypolicyviolation',
  (e) => window.__violations.push(e.effectiveDirective + ' ' + e.blockedURI));
"""


@pytest.fixture()
def watched(page):
    """The page, with its console errors, page errors and dialogs recorded."""
    record = {"console": [], "errors": [], "dialogs": []}
    page.add_init_script(WATCH)
    page.on("console", lambda m: m.type == "error" and record["console"].append(m.text))
    page.on("pageerror", lambda e: record["errors"].append(str(e)))

    def dismiss(dialog) -> None:
        record["dialogs"].append(dialog.message)
        dialog.dismiss()

    page.on("dialog", dismiss)
    return page, record


def open_session(page, data: bytes, name: str, response: str) -> str:
    """A session on the file with its response and a ridge penalty (so that all four figures
    are drawn), open on the inspection view."""
    r = page.request.post("/api/upload", multipart={
        "file": {"name": name, "mimeType": "text/csv", "buffer": data}})
    assert r.status == 201, r.text()
    sid = r.json()["session"]
    r = page.request.post(f"/api/s/{sid}/changes", data={
        "kind": "step", "payload": {"step": "response", "column": response}})
    assert r.status == 200, r.text()
    r = page.request.post(f"/api/s/{sid}/changes", data={
        "kind": "ridge", "payload": {"penalty": 0.5}})
    assert r.status == 200, r.text()
    page.goto(f"/s/{sid}/inspect")
    page.wait_for_function("(ids) => window.Plotly && ids.every("
                           "(id) => document.querySelector(id + ' .main-svg'))",
                           arg=list(FIGURES))
    return sid


def hover_everything(page) -> None:
    """Show a hover label in every figure: hover text is drawn with style attributes."""
    for fig in FIGURES:
        point = [0, 1] if fig == "#fig-heatmap" else 0  # a heatmap's points are [row, column]
        page.evaluate("([id, point]) => Plotly.Fx.hover(document.querySelector(id),"
                      " [{curveNumber: 0, pointNumber: point}])", [fig, point])


def no_violations(page, record) -> None:
    assert page.evaluate("window.__violations") == []
    assert not [m for m in record["console"] if "Content Security Policy" in m], record
    assert record["errors"] == []


def test_inspect_page_draws_under_the_policy(watched) -> None:
    page, record = watched
    open_session(page, demo_path().read_bytes(), "cold_storage.csv", "energy_kwh")
    hover_everything(page)
    page.check('[data-heatmap-switch][value="spearman"]')
    page.wait_for_function("() => document.querySelector('#fig-heatmap').dataset.method"
                           " === 'spearman'")
    no_violations(page, record)


def test_markup_in_names_stays_text(watched) -> None:
    page, record = watched
    open_session(page, table_csv(), "markup.csv", RESPONSE)
    hover_everything(page)
    # The ridge trace of the name holding "%{x}", hovered: the name is shown, not filled
    # in (a Plotly hovertemplate placeholder) and not read as markup.
    page.wait_for_timeout(300)  # Plotly drops a hover that follows the last within 50 ms
    page.evaluate("""() => {
      const gd = document.querySelector('#fig-ridge');
      const k = gd.data.findIndex((t) => t.name.startsWith('%{x}'));
      Plotly.Fx.hover(gd, [{curveNumber: k, pointNumber: 2}]); }""")
    page.wait_for_function("document.querySelector('#fig-ridge .hoverlayer').textContent"
                           ".includes('bold')")
    ridge = page.evaluate("document.querySelector('#fig-ridge .hoverlayer').textContent")
    assert record["dialogs"] == []
    # Nothing the names hold became an element or a handler.
    assert page.evaluate("document.querySelectorAll('img[src=x], [onerror], [onload]')"
                         ".length") == 0
    # (The figures' data block is JSON, which no browser runs.)
    assert page.evaluate("document.querySelectorAll('script:not([src])"
                         ":not([type=\"application/json\"])').length") == 0
    # The names are shown exactly as written, in the tables and in the figures' labels.
    text = page.inner_text("#workspace")
    assert NAMES[2] in text and "=cmd|' /C calc'!A0" in text
    ticks = page.evaluate("Array.from(document.querySelectorAll('#fig-inflation .ytick text'))"
                          ".map((t) => t.textContent)")
    assert f"grp[{LEVELS[0]}]" in ticks and NAMES[5] in ticks
    assert ridge.startswith(NAMES[5] + "penalty"), ridge
    # A change swaps in the server's new workspace fragment (innerHTML): still inert.
    page.click('#workspace [data-action="undo"]')
    page.wait_for_selector('#workspace[data-position="1"]')
    page.wait_for_function("() => document.querySelector('#fig-inflation .main-svg')")
    assert record["dialogs"] == []
    assert page.evaluate("document.querySelectorAll('img[src=x], [onerror], [onload]')"
                         ".length") == 0
    no_violations(page, record)


def test_report_draws_under_its_own_policy(watched, tmp_path: Path) -> None:
    page, record = watched
    sid = open_session(page, table_csv(), "markup.csv", RESPONSE)
    report = tmp_path / "report.html"
    report.write_bytes(page.request.get(f"/api/s/{sid}/export/report").body())
    page.goto(report.as_uri())
    page.wait_for_function("() => window.Plotly && document.querySelector("
                           "'#chart-spectrum .main-svg') && document.querySelector("
                           "'#chart-inflation .main-svg')")
    assert record["dialogs"] == []
    assert page.evaluate("document.querySelectorAll('img[src=x], [onerror], [onload]')"
                         ".length") == 0
    ticks = page.evaluate("Array.from(document.querySelectorAll('#chart-inflation .ytick "
                          "text')).map((t) => t.textContent)")
    assert NAMES[5] in ticks
    no_violations(page, record)
