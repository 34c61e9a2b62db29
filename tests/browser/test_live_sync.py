"""Two browsers on one session: a change made in one shows in the other within seconds, the
viewer count says how many pages are open, and a view-only link shows the controls switched
off. References: the session's own positions and versions as the server reports them, and
unit definitions for the dependency that is dropped (NIST SP 811 App. B.8)."""

from __future__ import annotations

import re

from tests.browser.test_inspect import open_demo

#: "Within a second" on the server; the browser then fetches and draws the fresh view.
SEEN_MS = 5_000


def viewers(page) -> str:
    return page.inner_text("#viewer-count")


def test_change_in_one_page_shows_in_the_other(browser, base_url, page) -> None:
    open_demo(page)
    sid = page.get_attribute("#workspace", "data-session")
    page.click("#share-button")
    page.wait_for_selector("#share-dialog[open]")
    edit_link = page.input_value("#share-edit")
    view_link = page.input_value("#share-view")
    assert re.search(rf"/s/{sid}\?t=[\w-]{{40,}}$", edit_link)
    assert edit_link != view_link
    page.click("#share-dialog button[type=submit]")

    other_context = browser.new_context(base_url=base_url, viewport={"width": 1400, "height": 1000})
    try:
        other = other_context.new_page()
        other.set_default_timeout(30_000)
        other.goto(edit_link)
        # The key went into a cookie and out of the address bar.
        other.wait_for_function("() => !window.location.search.includes('t=')")
        other.goto(f"/s/{sid}/inspect")
        other.wait_for_selector("#workspace")
        # Reference: two pages are open on the session, so both count 2.
        page.wait_for_function("() => document.getElementById('viewer-count').textContent"
                               " === '2'", timeout=SEEN_MS)
        other.wait_for_function("() => document.getElementById('viewer-count').textContent"
                                " === '2'", timeout=SEEN_MS)
        assert viewers(page) == viewers(other) == "2"

        pos = int(page.get_attribute("#workspace", "data-position"))
        assert other.get_attribute("#workspace", "data-position") == str(pos)
        # reference: NIST SP 811 App. B.8, °F = 32 + 1.8·°C, the relation dropped here
        page.click('li.dependency[data-column="outdoor_temp_f"] button:text("Drop outdoor_temp_f")')
        page.wait_for_selector(f'#workspace[data-position="{pos + 1}"]')
        other.wait_for_selector(f'#workspace[data-position="{pos + 1}"]', timeout=SEEN_MS)
        assert other.locator('li.dependency[data-column="outdoor_temp_f"]').count() == 0
        assert other.get_attribute("#workspace", "data-version") == \
            page.get_attribute("#workspace", "data-version")

        # And back: an undo in the second page shows in the first.
        other.click('button[data-action="undo"]')
        page.wait_for_selector(f'#workspace[data-position="{pos}"]', timeout=SEEN_MS)
        assert page.locator('li.dependency[data-column="outdoor_temp_f"]').count() == 1

        watcher = other_context.browser.new_context(base_url=base_url)
        try:
            view_page = watcher.new_page()
            view_page.goto(view_link)
            view_page.goto(f"/s/{sid}/inspect")
            view_page.wait_for_selector("#view-only-note")
            assert view_page.locator('button[data-action="undo"]').is_disabled()
            page.wait_for_function("() => document.getElementById('viewer-count')"
                                   ".textContent === '3'", timeout=SEEN_MS)
        finally:
            watcher.close()
        page.wait_for_function("() => document.getElementById('viewer-count').textContent"
                               " === '2'", timeout=SEEN_MS)
    finally:
        other_context.close()
