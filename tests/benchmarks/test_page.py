"""The page benchmark end to end on a small wide table (its goals are measured, not asserted).

Reference: the lines the script promises in its docstring.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def test_page_benchmark_smoke(browser) -> None:
    """Runs where the browser tests run (the `browser` fixture skips without Chromium)."""
    out = subprocess.run([sys.executable, "-m", "rankscope.benchmarks.page", "--rows", "400",
                          "--levels", "60"], cwd=ROOT, capture_output=True, text=True,
                         timeout=600, check=False)
    assert out.returncode == 0, out.stderr
    for words in ("demo cold_storage.csv (baseline)", "wide 400 rows, 60-level category",
                  "shipped at load (HTML + JSON)", "ready for input",
                  "change: click to repainted", "of which the server", "shipped_mb"):
        assert words in out.stdout, out.stdout
    assert out.stdout.count("(×") >= 4  # ratios against the demo page of the same run


