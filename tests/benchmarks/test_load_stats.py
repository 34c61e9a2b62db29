"""The load driver's summary: which answers count as errors, rates and percentiles per kind.

References: RFC 9110 status classes (2xx success; 409 the protocol's own refusal), and
numpy.percentile on the same latencies.
"""

from __future__ import annotations

import numpy as np
import pytest

from rankscope.benchmarks.load_stats import Sample, is_error, summarize, table_text


@pytest.mark.parametrize(("status", "error"), [(200, False), (201, False), (409, False),
                                               (400, True), (404, True), (503, True),
                                               (500, True), (None, True)])
def test_errors_are_anything_but_success_or_a_conflict(status, error) -> None:
    assert is_error(Sample("edit", 0.1, status)) is error


def test_rows_per_kind_then_all() -> None:
    rng = np.random.default_rng(5)
    edits = rng.uniform(0.01, 2.0, 200)
    samples = [Sample("edit", float(s), 200) for s in edits] + \
        [Sample("read", 0.05, 200), Sample("read", 0.07, 409), Sample("upload", 0.3, None)]
    rows = {r.kind: r for r in summarize(samples, wall_seconds=10.0)}
    assert list(rows) == ["upload", "read", "edit", "all"]
    # Reference: numpy's percentiles of the same latencies, in milliseconds.
    p50, p95, p99 = np.percentile(edits * 1000, [50, 95, 99])
    assert (rows["edit"].p50_ms, rows["edit"].p95_ms, rows["edit"].p99_ms) == \
        pytest.approx((p50, p95, p99))
    assert rows["all"].requests == 203 and rows["all"].rate == pytest.approx(20.3)
    assert (rows["all"].errors, rows["all"].conflicts) == (1, 1)
    assert (rows["read"].errors, rows["upload"].errors) == (0, 1)
    text = table_text(list(rows.values()))
    assert text.splitlines()[0].split("|")[1].strip() == "kind"
    assert len(text.splitlines()) == 2 + 4


def test_a_kind_without_requests_has_no_percentiles() -> None:
    rows = summarize([Sample("edit", 0.1, 200)], wall_seconds=1.0)
    assert rows[0].kind == "upload" and rows[0].requests == 0 and np.isnan(rows[0].p50_ms)
