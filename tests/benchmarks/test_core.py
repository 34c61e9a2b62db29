"""The benchmark runs end to end in its quick mode and prints its table (no timing checks).

Reference: the table layout rankscope.benchmarks.core promises (a header row and one verdict
per goal).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def test_bench_quick_runs() -> None:
    done = subprocess.run([sys.executable, "-m", "rankscope.benchmarks.core", "--quick"], cwd=ROOT,
                          capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stderr
    out = done.stdout
    assert "mode: quick" in out and "BLAS" in out
    assert "measurement" in out and "verdict" in out
    for what in ("full diagnosis / numpy lstsq", "full diagnosis / XᵀX product",
                 "all VIFs: regression loop / full diagnosis",
                 "blocked factorization / one LAPACK QR",
                 "peak memory of a diagnosis / matrix bytes",
                 "edit and refit / full diagnosis: drop x5", "most rows / fewest rows"):
        assert what in out, what
    assert "path: factor" in out  # the timed edit took the factor path
    assert "goal(s) MISSED" in out or "every goal met" in out
