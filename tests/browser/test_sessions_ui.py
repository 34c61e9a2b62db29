"""The session controls in a browser: downloads from the Download menu, a recipe imported from
a file, and the start page's rename and delete. References: the session's history as the
server reports it, Python's json module, and RFC 9110 for the status of a deleted session."""

from __future__ import annotations

import json

from tests.browser.test_inspect import open_demo


def test_download_and_import_a_recipe(page, tmp_path) -> None:
    open_demo(page)
    sid = page.get_attribute("#workspace", "data-session")
    pos = int(page.get_attribute("#workspace", "data-position"))
    recipe = tmp_path / "drop-two.json"
    recipe.write_text(json.dumps({"format": "rankscope-recipe", "version": 1, "steps": [
        {"step": "drop", "column": "outdoor_temp_f"}, {"step": "drop", "column": "goods_in_kg"}]}))
    page.set_input_files("#import-file", str(recipe))
    # The import is one change: one position further, one undo takes it back.
    page.wait_for_selector(f'#workspace[data-position="{pos + 1}"]')
    assert "Imported 2 step(s)" in page.inner_text("#notice-text")
    # A file that is not a recipe: a message, and the session as it was.
    bad = tmp_path / "notes.json"
    bad.write_text("these are notes, not a recipe")
    page.set_input_files("#import-file", str(bad))
    page.wait_for_function("() => document.getElementById('notice-text').textContent"
                           ".includes('notes.json')")
    assert page.get_attribute("#workspace", "data-position") == str(pos + 1)

    page.click("#download-menu summary")
    with page.expect_download() as info:
        page.click('a[data-download="recipe"]')
    saved = json.loads(open(info.value.path(), encoding="utf-8").read())  # Python's json
    history = page.request.get(f"/api/s/{sid}/history").json()
    # Reference: the recipe the server says is in force.
    assert saved["steps"] == history["recipe"]
    assert info.value.suggested_filename.endswith("-recipe.json")
    page.click("#download-menu summary")
    with page.expect_download() as info:
        page.click('a[data-download="report"]')
    assert info.value.suggested_filename.endswith("-report.html")


def test_start_page_renames_and_deletes(page) -> None:
    open_demo(page)
    sid = page.get_attribute("#workspace", "data-session")
    page.goto("/")
    row = f'[data-session-row="{sid}"]'
    page.click(f"{row} [data-rename]")
    page.fill(f"{row} input[name=title]", "Cold room, spring")
    page.click(f"{row} form button[type=submit]")
    page.wait_for_function(f"() => document.querySelector('{row} .session-link')"
                           ".textContent === 'Cold room, spring'")
    page.reload()
    assert page.inner_text(f"{row} .session-link") == "Cold room, spring"
    page.once("dialog", lambda d: d.accept())
    page.click(f"{row} [data-delete]")
    page.wait_for_selector(row, state="detached")
    # Reference: RFC 9110 §15.5.5, the session's address now answers 404.
    assert page.request.get(f"/s/{sid}").status == 404
