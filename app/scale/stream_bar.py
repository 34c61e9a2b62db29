"""A one-line progress bar on a terminal stream for `check --stream` (rows, MB, share, speed).

Writes to the stream it is given only; on a stream that is not a terminal it prints one
line per tenth instead of redrawing.
"""

from __future__ import annotations

import time
from typing import TextIO

WIDTH = 28


class ProgressBar:
    """Callable as the streaming progress callback: bar(rows_done, bytes_done, bytes_total)."""

    def __init__(self, stream: TextIO, *, terminal: bool | None = None,
                 every: float = 0.1) -> None:
        self.stream = stream
        self.terminal = stream.isatty() if terminal is None else terminal
        self.every = every
        self.started = time.monotonic()
        self.last = -1.0
        self.tenth = -1
        self.drawn = False

    def line(self, rows: int, done: int, total: int) -> str:
        share = min(done / total, 1.0) if total > 0 else 0.0
        filled = int(round(share * WIDTH))
        secs = max(time.monotonic() - self.started, 1e-9)
        return (f"[{'#' * filled}{'.' * (WIDTH - filled)}] {share:4.0%}  {rows:,} rows  "
                f"{done / 1e6:,.0f}/{total / 1e6:,.0f} MB  {done / 1e6 / secs:,.1f} MB/s")

    def __call__(self, rows: int, done: int, total: int) -> None:
        now = time.monotonic()
        if self.terminal:
            # Redrawing more often than every 0.1 s costs time and shows nothing new.
            if now - self.last < self.every and done < total:
                return
            self.last = now
            self.stream.write("\r" + self.line(rows, done, total))
            self.drawn = True
        else:
            tenth = int(10 * done / total) if total > 0 else 0
            if tenth == self.tenth:
                return
            self.tenth = tenth
            self.stream.write(self.line(rows, done, total) + "\n")
        self.stream.flush()

    def close(self) -> None:
        """End the bar's line so that what follows starts on a fresh one."""
        if self.terminal and self.drawn:
            self.stream.write("\n")
            self.stream.flush()
