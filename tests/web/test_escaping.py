"""Column names and cells that are markup, templates, formulas or quote breakers are shown as
text everywhere: pages (HTML 5 escaping), figure labels (Plotly's HTML subset), the HTML
report, the terminal report (ECMA-48 controls) and the generated Python script (the Python
grammar, via ast). References: the HTML 5 tokenizer rules for text and attributes; Python's
own parser; OWASP's XSS and CSV-injection cheat sheets for the payloads.
"""

from __future__ import annotations

import ast
import html
import json
import re
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

from rankscope.report.figures import plot_text
from tests.cli.runner import run
from tests.web.markup_table import (
    ACTIVE,
    GROUP,
    LEVELS,
    NAMES,
    PLAIN_RESPONSE,
    RESPONSE,
    table_csv,
)

FILE = "t<script>alert(9)</script>.csv"


def open_session(client: TestClient, plain: bool = False) -> str:
    r = client.post("/api/upload", files={"file": (FILE, table_csv(plain), "text/csv")})
    assert r.status_code == 201, r.text
    sid = r.json()["session"]
    r = client.post(f"/api/s/{sid}/changes", json={
        "kind": "step",
        "payload": {"step": "response", "column": PLAIN_RESPONSE if plain else RESPONSE}})
    assert r.status_code == 200, r.text
    return sid


@pytest.fixture()
def sid(client: TestClient) -> str:
    return open_session(client)


def without_own_scripts(page: str) -> str:
    """The page with the program's own <script src=…> tags and its JSON data block removed
    (their content is checked separately), so any other <script is an injected one."""
    page = re.sub(r'<script src="/[a-z/.]+"( defer)?></script>', "", page)
    return re.sub(r'<script type="application/json" id="figure-data">.*?</script>', "", page,
                  flags=re.S)


def test_pages_show_markup_as_text(client: TestClient, sid: str) -> None:
    for path in ["/", f"/s/{sid}", f"/s/{sid}/inspect", f"/s/{sid}/workspace"]:
        r = client.get(path)
        assert r.status_code == 200, path
        assert r.headers["content-type"].startswith("text/html")
        body = without_own_scripts(r.text)
        assert "<script" not in body.lower(), path
        for active in ACTIVE:
            assert active not in body, (path, active)
    # ... and the names are there, escaped as HTML text (HTML 5 §13.1.2.6: &lt; &gt; &amp;).
    inspect = client.get(f"/s/{sid}/inspect").text
    assert html.escape(NAMES[0], quote=False) in inspect
    assert "{{7*7}}" in inspect  # shown as written: the table is data, never a template


def test_figure_data_block_cannot_close_its_script(client: TestClient, sid: str) -> None:
    page = client.get(f"/s/{sid}/inspect").text
    block = re.search(r'<script type="application/json" id="figure-data">(.*?)</script>',
                      page, flags=re.S)
    assert block is not None
    # Jinja's tojson writes < > & ' as \u escapes, so nothing inside can end the element.
    assert "<" not in block.group(1) and ">" not in block.group(1)
    figures = json.loads(block.group(1))
    labels = figures["inflation"]["data"][0]["y"]
    assert plot_text(NAMES[0]) in labels and NAMES[0] not in labels


def test_figure_labels_are_entities_plotly_shows_as_text(client: TestClient, sid: str) -> None:
    figs = client.get(f"/api/s/{sid}/figures").json()
    shown: list[str] = []
    for fig in figs.values():
        for trace in (fig or {}).get("data", []):
            for key in ("x", "y"):
                shown += [v for v in trace.get(key, []) if isinstance(v, str)]
            if isinstance(trace.get("name"), str):
                shown.append(trace["name"])
            # Names are referred to (%{fullData.name}), never pasted into a template.
            assert not any(n in trace.get("hovertemplate", "") for n in NAMES)
    assert shown
    for text in shown:
        assert "<" not in text.replace("<br>", "") and ">" not in text, text
    # Decoding the entities, as Plotly does for display, gives the names back exactly.
    assert {html.unescape(t) for t in shown} >= set(NAMES[2:])  # (0 and 1 are aliased away)


def test_html_report_is_inert(client: TestClient, sid: str) -> None:
    r = client.get(f"/api/s/{sid}/export/report")
    assert r.status_code == 200
    page = r.text
    scripts = re.findall(r"<script>(.*?)</script>", page, flags=re.S)
    assert len(scripts) == 2  # plotly.js and the drawing code; nothing else runs
    body = re.sub(r"<script>.*?</script>", "", page, flags=re.S)
    for active in ACTIVE:
        assert active not in body, active
    assert "<script" not in body
    # The drawing code holds the names only as \u-escaped JavaScript strings.
    assert "alert" in scripts[1] and "<" not in scripts[1]
    # Its own CSP (CSP Level 3 hash-source) allows those two scripts and nothing else.
    policy = re.search(r'http-equiv="Content-Security-Policy" content="([^"]+)"', page)
    assert policy is not None and html.unescape(policy.group(1)).count("'sha256-") == 2
    assert "unsafe-inline" not in html.unescape(policy.group(1)).split("script-src")[1] \
        .split(";")[0]


def node_kinds(code: str) -> list[str]:
    return [type(n).__name__ for n in ast.walk(ast.parse(code))]


def test_script_names_stay_inside_strings_and_comments(client: TestClient, sid: str) -> None:
    hostile = client.get(f"/api/s/{sid}/export/script").text
    plain = client.get(f"/api/s/{open_session(client, plain=True)}/export/script").text
    # The same program whatever the names: Python's own parser finds the same statements and
    # expressions, so no name broke out of a string literal or a comment.
    assert node_kinds(hostile) == node_kinds(plain)
    tree = ast.parse(hostile)
    literals = {n.value for n in ast.walk(tree)
                if isinstance(n, ast.Constant) and isinstance(n.value, str)}
    assert set(NAMES) <= literals and RESPONSE in literals
    columns = next(ast.literal_eval(n.value) for n in tree.body if isinstance(n, ast.Assign)
                   and getattr(n.targets[0], "id", "") == "columns")
    assert NAMES[0] in columns and f"{GROUP}[{LEVELS[0]}]" in columns
    compile(hostile, "design.py", "exec")


def test_design_csv_neutralizes_formula_names(client: TestClient, sid: str) -> None:
    header = client.get(f"/api/s/{sid}/export/design").text.splitlines()[0]
    # OWASP CSV injection: a cell starting with = is written with a leading quote.
    assert "'=cmd|" in header and ",=cmd" not in header


def test_terminal_report_shows_controls_as_escapes(tmp_path: Path) -> None:
    path = tmp_path / "markup.csv"
    path.write_bytes(table_csv())
    r = run("check", str(path), "--response", RESPONSE)
    assert r.code == 0, r.err
    assert "\x1b" not in r.out  # ECMA-48: ESC would start a control sequence
    assert "\\x1b[31mred" in r.out
    assert NAMES[0] in r.out  # plain text is shown as it is
