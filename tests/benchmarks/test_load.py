"""The load driver for a few seconds with three sessions against a real server: every request
answered as the protocol says (2xx, or an expected 409), and its table printed. A smoke run,
not a timing: no latency is asserted.

Reference: the driver's own count of failed requests, and its exit code.
"""

from __future__ import annotations

from rankscope.benchmarks import load
from rankscope.benchmarks.load_stats import KINDS


def test_three_sessions_for_a_few_seconds_without_errors(capsys) -> None:
    code = load.main(["--sessions", "3", "--seconds", "3"])
    out = capsys.readouterr().out
    assert code == 0, out
    rows = {line.split("|")[1].strip(): line.split("|")[2:] for line in out.splitlines()
            if line.startswith("| ")}
    for kind in (*KINDS, "all"):
        requests, errors = int(rows[kind][0]), int(rows[kind][5])
        assert requests > 0 and errors == 0, out
    assert int(rows["upload"][0]) == 3, out
