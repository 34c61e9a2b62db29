"""The streaming memory benchmark and the read benchmark end to end on tiny inputs:
each runs and prints its table (their goals are measured, not asserted).

Reference: the lines each script promises in its docstring.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]


def _run(*args: str) -> str:
    out = subprocess.run([sys.executable, "-m", *args], cwd=ROOT, capture_output=True,
                         text=True, timeout=300, check=False)
    assert out.returncode == 0, out.stderr
    return out.stdout


def test_memory_benchmark_smoke(tmp_path: Path) -> None:
    """The benchmark script end to end on a tiny file (its goal is measured, not asserted)."""
    out = _run("rankscope.benchmarks.stream", "--mb", "2", "--dir", str(tmp_path))
    assert "peak memory" in out and "planted x4 = x1 + 2·x2 − x3 found" in out
    assert list(tmp_path.iterdir()) == []  # the generated file was deleted


def test_read_benchmark_smoke() -> None:
    out = _run("rankscope.benchmarks.read", "--mb", "0.5", "--repeat", "1")
    assert "read_table" in out and "pandas.read_csv" in out and "pyarrow.csv.read_csv" in out
    assert "ratio read_table/" in out and "(the faster)" in out
    assert "stages: only for files of 8 MB or more" in out


def test_refit_benchmark_smoke() -> None:
    """Narrow (with at most 10 columns, which once crashed) and wide cases on tiny tables."""
    out = _run("rankscope.benchmarks.refit", "--rows", "200", "--cols", "4", "--repeat", "1",
               "--wide", "24", "--wide-rows", "200")
    for line in ("generated 200 × 4 (Parquet)", "linear change + refit (factor path)",
                 "nonlinear change + refit (rebuild path)", "wide numbers 200 × 24",
                 "wide category 200 × 24", "first analysis in the web app",
                 "slowest linear change"):
        assert line in out, line
    assert "ratio" in out and "linear: factor" in out
