"""The whole-process `check` benchmark runs end to end in its quick mode and prints its table
(no timing checks).

Reference: the table layout rankscope.benchmarks.check promises (a row per case and output,
an import row, and one verdict per goal).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def test_check_bench_quick_runs() -> None:
    done = subprocess.run([sys.executable, "-m", "rankscope.benchmarks.check", "--quick"],
                          cwd=ROOT, capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stderr
    out = done.stdout
    assert "mode: quick" in out and "load average" in out
    for what in ("2,000 × 10 CSV: `check` / pyarrow read + lstsq",
                 "20,000 × 20 Parquet: `check --json` / pyarrow read + lstsq",
                 "2,000 × 100 Parquet: `check` / pyarrow read + lstsq",
                 "2,000 × 100 Parquet with dependencies: `check` / pyarrow read + lstsq",
                 "imports of `check` beyond the baseline's"):
        assert what in out, what
    assert "goal(s) MISSED" in out or "every goal met" in out
