"""Screenshots of the real app on the demo data, for the README and the docs site.
Drives a running server through a Playwright browser; writes PNG files and nothing else.

The browser test tests/browser/test_screenshots.py calls `make_screenshots` against the shared
test server, so the pictures cannot drift from the app. To refresh the committed ones in
docs/images/, run `python -m tests.browser.screenshots` (it runs that test with
RANKSCOPE_SCREENSHOTS set to the folder).
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
IMAGES = ROOT / "docs" / "images"
RESPONSE = "energy_kwh"
WIDTH = 1200

#: The pictures, in the order they are made: file name and what it shows.
SHOTS = {
    "diagnosis.png": "the diagnosis: rank, condition numbers, exact dependencies as equations",
    "conditioning.png": "condition indices with their variance-decomposition proportions",
    "inflation.png": "VIF and tolerance per column, GVIF for the site indicators",
}


def make_screenshots(browser, base_url: str, demo: Path, out_dir: Path) -> list[Path]:
    """Upload the demo table, choose its response, open the diagnosis and photograph SHOTS."""
    out_dir.mkdir(parents=True, exist_ok=True)
    context = browser.new_context(base_url=base_url, viewport={"width": WIDTH, "height": 760},
                                  device_scale_factor=1)
    try:
        page = context.new_page()
        page.set_default_timeout(30_000)
        page.goto("/")
        page.set_input_files("#file-input", str(demo))
        page.wait_for_url(re.compile(r"/s/[^/]+$"))
        page.select_option("#response-choice", RESPONSE)
        with page.expect_navigation():
            page.click("text=Use as response")
        paths = [out_dir / name for name in SHOTS]
        page.click("#go-inspect")
        page.wait_for_selector("#workspace")
        page.wait_for_function(
            "() => window.Plotly && document.querySelector('#fig-inflation .main-svg')")
        page.wait_for_selector("#dependency-list .equation")
        page.screenshot(path=str(paths[0]))
        page.locator("#sec-near").screenshot(path=str(paths[1]))
        page.locator("#sec-inflation").screenshot(path=str(paths[2]))
        return paths
    finally:
        context.close()


def main() -> int:
    """Refresh docs/images/ by running the browser test that makes the pictures."""
    env = {**os.environ, "RANKSCOPE_SCREENSHOTS": str(IMAGES)}
    test = "tests/browser/test_screenshots.py::test_screenshots_of_the_demo_are_made_from_the_app"
    return subprocess.call([sys.executable, "-m", "pytest", "-q", test], cwd=ROOT, env=env)


if __name__ == "__main__":
    raise SystemExit(main())
