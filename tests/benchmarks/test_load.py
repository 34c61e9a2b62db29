"""The load driver for a few seconds with three sessions against a real server, on one shared
file and on a file of its own per user: every request answered as the protocol says (2xx, or
an expected 409), and its table printed. A smoke run, not a timing: no latency is asserted.

Reference: the driver's own count of failed requests, and its exit code.
"""

from __future__ import annotations

import pytest

from rankscope.benchmarks import load
from rankscope.benchmarks.load_stats import KINDS
from rankscope.benchmarks.load_user import DEMO, distinct_table


@pytest.mark.parametrize("options", [[], ["--distinct-tables", "--table-memory-mb", "0.5"]],
                         ids=["one-file", "distinct-tables"])
def test_three_sessions_for_a_few_seconds_without_errors(capsys, options: list[str]) -> None:
    # The distinct run's budget holds about three of the demo table's variants, so tables
    # come and go from memory while the users edit.
    code = load.main(["--sessions", "3", "--seconds", "3", *options])
    out = capsys.readouterr().out
    assert code == 0, out
    rows = {line.split("|")[1].strip(): line.split("|")[2:] for line in out.splitlines()
            if line.startswith("| ")}
    for kind in (*KINDS, "all"):
        requests, errors = int(rows[kind][0]), int(rows[kind][5])
        assert requests > 0 and errors == 0, out
    assert int(rows["upload"][0]) == 3, out


def test_distinct_tables_differ_in_content_and_name() -> None:
    # Reference: the demo file itself, read as bytes.
    demo = DEMO.read_bytes()
    files = [distinct_table(demo, k) for k in range(20)]
    assert len({name for name, _ in files}) == len({data for _, data in files}) == 20
    for name, data in files:
        assert data.splitlines()[0] == demo.splitlines()[0] and name.endswith(".csv")
        assert len(data.splitlines()) == len(demo.splitlines()) - 1
