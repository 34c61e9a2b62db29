"""The HTML report: one page that parses, carries plotly.js inline, loads nothing from the
network, and shows the dependencies first, then conditioning, shares, VIF, fit and cautions.

References: Python's html.parser, the plotly package's file on disk, planted relations, and
Chromium with every network request refused.
"""

from __future__ import annotations

import re
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import plotly
import pytest

from rankscope.core.diagnosis import diagnose
from rankscope.design.design import Design
from rankscope.design.recipe import Recipe, build_design
from rankscope.report.html import render_html
from tests.design.tables import table

CHROMIUM = Path("/usr/bin/chromium")
EVIL = "<script>alert(1)</script>"


class Page(HTMLParser):
    """Every start tag with its attributes, the text, and the ids of sections in order."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.text: list[str] = []
        self.sections: list[str] = []
        self._in_script = False

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.tags.append((tag, dict(attrs)))
        if tag == "section":
            self.sections.append(dict(attrs).get("id") or "")
        self._in_script = tag in ("script", "style")

    def handle_endtag(self, tag: str) -> None:
        self._in_script = False

    def handle_data(self, data: str) -> None:
        if not self._in_script:
            self.text.append(data)


def planted(rng_seed: int = 5, evil: bool = False) -> tuple[dict, Design, Recipe]:
    """Random columns with two planted relations: c = a + b and d = 2·a (units)."""
    rng = np.random.default_rng(rng_seed)
    n = 60
    a, b = rng.normal(size=n), rng.normal(size=n)
    frame = {"a": a, "b": b, "c": a + b, "d": 2 * a, "e": rng.normal(size=n),
             "g": rng.choice(["x", "y", "z"], n), "y": a - b + rng.normal(size=n)}
    if evil:
        frame[EVIL] = rng.normal(size=n)
    recipe = Recipe([{"step": "response", "column": "y"}])
    design = build_design(table(frame), recipe)
    diag = diagnose(design.X, design.columns, design.y, response=design.response,
                    groups=design.groups, ridge_penalty=0.1).to_dict()
    return diag, design, recipe


@pytest.fixture(scope="module")
def report() -> tuple[str, dict]:
    diag, design, recipe = planted()
    return render_html(diag, title="Planted", source="planted.csv",
                       rows=(design.rows_used, design.rows_total), recipe=recipe,
                       notes=["A note from the reader.", *design.notes]), diag


def test_parses_and_loads_no_script_from_the_network(report: tuple[str, dict]) -> None:
    html, _ = report
    page = Page()
    page.feed(html)
    page.close()
    scripts = [attrs for tag, attrs in page.tags if tag == "script"]
    # Reference: html.parser's view of the page; a script with src would be fetched.
    assert len(scripts) == 2 and all("src" not in a for a in scripts)
    urls = [v for _, attrs in page.tags for v in attrs.values()
            if v and re.match(r"\s*(https?:)?//", v)]
    assert urls == []  # no link, image or frame points anywhere either
    assert not any(tag in ("link", "img", "iframe") for tag, _ in page.tags)


def test_carries_the_installed_plotly_bundle(report: tuple[str, dict]) -> None:
    html, _ = report
    # Reference: the plotly package's own file on disk, read here without rankscope.
    bundle = (Path(plotly.__file__).parent / "package_data" / "plotly.min.js").read_text(
        encoding="utf-8")
    assert bundle in html


def test_sections_and_equations(report: tuple[str, dict]) -> None:
    html, diag = report
    page = Page()
    page.feed(html)
    text = " ".join(page.text)
    # Reference: the planted relations c = a + b and d = 2·a.
    equations = [d["equation"] for d in diag["dependencies"]]
    assert sorted(equations) == ["c = a + b", "d = 2·a"]
    for eq in equations:
        assert eq in text
    # Reference: the order the report promises (dependencies first, cautions last).
    order = ["relations", "conditioning", "indices", "inflation", "fit", "cautions"]
    assert [s for s in page.sections if s in order] == order
    assert "Planted" in text and "planted.csv" in text and "A note from the reader." in text
    # Reference: VIF is infinite for a column in an exact dependency (R² = 1).
    assert re.search(r"c\s+∞\s+0\s+∞\s+in an exact dependency", text)


def test_column_names_cannot_inject_markup() -> None:
    diag, design, recipe = planted(evil=True)
    html = render_html(diag, title=EVIL, rows=(design.rows_used, design.rows_total),
                       recipe=recipe, notes=design.notes)
    page = Page()
    page.feed(html)
    # Reference: html.parser finds only the report's own two scripts; the name is text.
    assert sum(tag == "script" for tag, _ in page.tags) == 2
    assert EVIL in " ".join(page.text)
    scripts = re.findall(r"<script>(.*?)</script>", html, flags=re.S)
    assert len(scripts) == 2


def test_opens_offline_in_a_browser(report: tuple[str, dict], tmp_path: Path, browser) -> None:
    html, _ = report
    path = tmp_path / "report.html"
    path.write_text(html, encoding="utf-8")
    asked: list[str] = []
    # One shared Chromium (tests/conftest.py): Playwright allows one per thread.
    page = browser.new_page()

    def refuse(route) -> None:  # noqa: ANN001 - playwright's Route
        asked.append(route.request.url)
        if route.request.url.startswith("file://"):
            route.continue_()
        else:
            route.abort()

    page.route("**/*", refuse)
    errors: list[str] = []
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.goto(path.as_uri())
    page.wait_for_function("document.querySelectorAll('.chart .main-svg').length >= 4",
                           timeout=20_000)
    drawn = page.eval_on_selector_all(".chart", "els => els.map(e => e.id)")
    page.close()
    # Reference: Chromium itself: the charts were drawn with every network request refused,
    # and the page asked for nothing but its own file.
    assert errors == []
    assert asked == [path.as_uri()]
    assert set(drawn) == {"chart-spectrum", "chart-inflation", "chart-correlation",
                          "chart-ridge"}


def test_a_wide_report_shows_the_dimensions_that_matter_and_no_grey_heatmap() -> None:
    """Past WIDE_COLUMNS the index table shows the most ill-conditioned and the flagged
    dimensions (reference: the planted near pair's dimension, found by the proportions) and
    the p × p heatmap gives way to a pointer to the block view."""
    from rankscope.report.html_sections import WIDE_DIMENSIONS
    from rankscope.report.text import WIDE_COLUMNS

    rng = np.random.default_rng(8)
    n, k = 150, WIDE_COLUMNS + 30
    frame = {f"c{i:02d}": rng.normal(size=n) for i in range(k)}
    frame["twin"] = frame["c07"] + rng.normal(0, 1e-4, n)  # a flagged near pair
    frame["y"] = rng.normal(size=n)
    design = build_design(table(frame), Recipe([{"step": "response", "column": "y"}]))
    diag = diagnose(design.X, design.columns, design.y, response=design.response).to_dict()
    page = render_html(diag, title="Wide")
    parsed = Page()
    parsed.feed(page)
    text = " ".join(" ".join(parsed.text).split())
    p = len(diag["columns"])
    assert f"of the {p} dimensions shown" in text
    heads = re.findall(r"<th[^>]*>#(\d+)", page)
    assert len(heads) >= WIDE_DIMENSIONS and len(heads) < p
    assert "1" in heads  # the most ill-conditioned: the near pair's dimension
    assert "Not drawn past" in text
    figures = re.search(r"const FIGURES = (\{.*?\});\n", page, re.S)
    assert figures and '"correlation"' not in figures.group(1)
    assert len(page) < 6_000_000  # plotly.js (about 4.6 MB) and the tables; not p² cells
