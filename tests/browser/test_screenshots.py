"""The README's screenshots are made from the running app by tests/browser/screenshots.py:
made here against the shared test server, checked to be real, small PNG pictures."""

from __future__ import annotations

import os
import struct
from pathlib import Path

from tests.browser.conftest import ROOT, demo_path
from tests.browser.screenshots import IMAGES, SHOTS, make_screenshots

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
MAX_BYTES = 200_000


def png_size(path: Path) -> tuple[int, int]:
    """Width and height from the IHDR chunk (PNG specification, section 11.2.2)."""
    head = path.read_bytes()[:24]
    assert head[:8] == PNG_SIGNATURE, f"{path.name} is not a PNG file"
    assert head[12:16] == b"IHDR"
    return struct.unpack(">II", head[16:24])


def test_screenshots_of_the_demo_are_made_from_the_app(browser, base_url, tmp_path) -> None:
    out = Path(os.environ.get("RANKSCOPE_SCREENSHOTS") or tmp_path)
    paths = make_screenshots(browser, base_url, demo_path(), out)
    assert [p.name for p in paths] == list(SHOTS)
    for p in paths:
        width, height = png_size(p)
        assert width >= 800 and height >= 400, (p.name, width, height)
        assert 10_000 < p.stat().st_size <= MAX_BYTES, (p.name, p.stat().st_size)


def test_readme_shows_the_committed_screenshots() -> None:
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    for name in SHOTS:
        assert f"docs/images/{name}" in readme, name
        committed = IMAGES / name
        assert committed.exists(), f"run python -m tests.browser.screenshots to make {name}"
        assert png_size(committed)[0] >= 800
        assert committed.stat().st_size <= MAX_BYTES
