"""The stream's progress bar on a terminal, and the memory benchmark's smoke run."""

from __future__ import annotations

import io
import subprocess
import sys
from pathlib import Path

from app.scale.stream_bar import ProgressBar


def test_progress_bar_redraws_one_line_on_a_terminal() -> None:
    buf = io.StringIO()
    bar = ProgressBar(buf, terminal=True, every=0.0)
    for done in (0, 50, 100):
        bar(done * 10, done * 1_000_000, 100_000_000)
    bar.close()
    text = buf.getvalue()
    # Reference: the values passed in (3 redraws; 100 MB of 100 MB is a full bar).
    assert text.count("\r") == 3 and text.endswith("\n")
    assert "[" + "#" * 28 + "] 100%" in text and "1,000 rows" in text


def test_memory_benchmark_smoke(tmp_path: Path) -> None:
    """The benchmark script end to end on a tiny file (its goal is measured, not asserted)."""
    out = subprocess.run([sys.executable, "-m", "app.scale.bench_stream", "--mb", "2",
                          "--dir", str(tmp_path)], capture_output=True, text=True, timeout=300,
                         check=False)
    assert out.returncode == 0, out.stderr
    assert "peak memory" in out.stdout and "planted x4 = x1 + 2·x2 − x3 found" in out.stdout
    assert list(tmp_path.iterdir()) == []  # the generated file was deleted
