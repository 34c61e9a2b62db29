"""What the load driver measured, summed up: request counts, rate, latency percentiles and
errors per kind of request, and the one table it prints.

Pure functions on recorded samples; no network, no clock.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: The kinds of request a virtual user makes, in the table's order.
KINDS = ("upload", "read", "edit")
#: The session moved on under a change: an answer the protocol expects, not a failure.
CONFLICT = 409


@dataclass(frozen=True)
class Sample:
    """One request: its kind, how long the answer took, and its status (None when no
    answer came: a refused connection, a timeout)."""

    kind: str
    seconds: float
    status: int | None


@dataclass(frozen=True)
class Row:
    kind: str
    requests: int
    rate: float
    p50_ms: float
    p95_ms: float
    p99_ms: float
    errors: int
    conflicts: int


def is_error(sample: Sample) -> bool:
    """Any answer other than 2xx or an expected 409, and any request without an answer."""
    status = sample.status
    return status is None or not (200 <= status < 300 or status == CONFLICT)


def row_of(kind: str, samples: list[Sample], wall_seconds: float) -> Row:
    ms = np.array([s.seconds for s in samples]) * 1000.0
    # numpy's default (linear interpolation between closest ranks); nan when there are none.
    p50, p95, p99 = np.percentile(ms, [50, 95, 99]) if len(ms) else (np.nan,) * 3
    return Row(kind, len(samples), len(samples) / wall_seconds if wall_seconds > 0 else 0.0,
               float(p50), float(p95), float(p99), sum(map(is_error, samples)),
               sum(s.status == CONFLICT for s in samples))


def summarize(samples: list[Sample], wall_seconds: float) -> list[Row]:
    """One row per kind (in KINDS order, then any other), then "all"."""
    kinds = list(KINDS) + sorted({s.kind for s in samples} - set(KINDS))
    rows = [row_of(k, [s for s in samples if s.kind == k], wall_seconds) for k in kinds]
    return rows + [row_of("all", samples, wall_seconds)]


def table_text(rows: list[Row]) -> str:
    """The rows as a fixed-width text table (Markdown-compatible)."""
    head = ["kind", "requests", "req/s", "p50 ms", "p95 ms", "p99 ms", "errors", "409s"]
    body = [[r.kind, str(r.requests), f"{r.rate:.1f}", f"{r.p50_ms:.0f}", f"{r.p95_ms:.0f}",
             f"{r.p99_ms:.0f}", str(r.errors), str(r.conflicts)] for r in rows]
    widths = [max(len(line[i]) for line in [head, *body]) for i in range(len(head))]

    def line(cells: list[str]) -> str:
        return "| " + " | ".join(c.ljust(w) if i == 0 else c.rjust(w)
                                 for i, (c, w) in enumerate(zip(cells, widths, strict=True))
                                 ) + " |"

    rule = "|" + "|".join("-" * (w + 1) + ":" if i else "-" * (w + 2)
                          for i, w in enumerate(widths)) + "|"
    return "\n".join([line(head), rule, *map(line, body)])
