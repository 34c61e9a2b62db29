"""The notebook view (`_repr_html_`) in headless Chromium with every network request
refused: no console errors, no request at all, and the report's charts draw."""

from __future__ import annotations

import pytest

import rankscope
from tests.api.data import planted


@pytest.fixture()
def offline_page(browser):
    context = browser.new_context(viewport={"width": 1300, "height": 1000})
    requests: list[str] = []

    def refuse(route) -> None:
        requests.append(route.request.url)
        route.abort()

    context.route("**/*", refuse)  # the network is refused; anything asked for is recorded
    page = context.new_page()
    page.set_default_timeout(30_000)
    problems: list[str] = []
    page.on("console", lambda m: problems.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: problems.append(str(e)))
    yield page, requests, problems
    context.close()


def test_repr_html_draws_offline(offline_page):
    page, requests, problems = offline_page
    got = rankscope.inspect(planted(), formula="y ~ u + v + w + z + C(g) + u:g")
    html = got._repr_html_()
    # As a notebook shows it: the output fragment inside the notebook's own page.
    page.set_content(f"<!DOCTYPE html><html><body><h1>notebook</h1>{html}</body></html>",
                     wait_until="load")
    frame = page.frame_locator("iframe.rankscope-report")
    for section in ("relations", "conditioning", "indices", "inflation", "fit"):
        assert frame.locator(f"section#{section}").count() == 1, section
    frame.locator("#chart-spectrum .main-svg").first.wait_for()
    frame.locator("#chart-inflation .main-svg").first.wait_for()
    frame.locator("#chart-correlation .main-svg").first.wait_for()
    assert frame.locator(".js-plotly-plot").count() >= 3
    assert "u − 2·v" in frame.locator("section#relations").inner_text()
    assert problems == []
    assert requests == []


def test_plain_repr_is_a_short_summary():
    got = rankscope.inspect(planted(), formula="y ~ u + v + w + C(g)")
    text = repr(got)
    assert len(text.splitlines()) <= 8
    assert "rank 5 of 6 (deficient by 1)" in text and "exact: w = u − 2·v" in text
