"""The stream's progress bar on a terminal."""

from __future__ import annotations

import io

from rankscope.scale.stream_bar import ProgressBar


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
