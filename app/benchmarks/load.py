"""Load driver: a real rankscope server in a child process on loopback, N virtual users
uploading, opening and editing the demo table at once for a bounded time; prints one table.

    python -m rankscope.benchmarks.load [--sessions 20] [--seconds 30] [--think 0]
                                        [--distinct-tables]

--distinct-tables: each user uploads its own file (different content and name) instead of
all uploading the same demo file, so the server holds as many tables as there are users.

Exit code 1 when any request failed (anything but 2xx or an expected 409, or no answer).
"""

from __future__ import annotations

import argparse
import os
import platform
import sys
import tempfile
import threading
import time
from dataclasses import dataclass
from pathlib import Path

from rankscope.benchmarks.load_stats import Row, summarize, table_text
from rankscope.benchmarks.load_user import DEMO, Recorder, distinct_table, guarded_user
from rankscope.web.spawn import LiveServer


@dataclass(frozen=True)
class Result:
    rows: list[Row]
    failures: list[str]
    wall_seconds: float

    @property
    def errors(self) -> int:
        return self.rows[-1].errors


def drive(url: str, sessions: int, seconds: float, think: float = 0.0,
          distinct: bool = False) -> Result:
    """Run `sessions` virtual users against the server at url for `seconds` (requests in
    flight at the end are waited for and counted). distinct: each user uploads its own
    file (see distinct_table), else all upload the demo file."""
    table = DEMO.read_bytes()
    files = [distinct_table(table, k) if distinct else (DEMO.name, table)
             for k in range(sessions)]
    rec = Recorder()
    deadline = time.monotonic() + seconds
    users = [threading.Thread(target=guarded_user, args=(url, f"u{k}", data, deadline, rec,
                                                         think, name), daemon=True)
             for k, (name, data) in enumerate(files)]
    start = time.perf_counter()
    for user in users:
        user.start()
    for user in users:
        user.join()
    wall = time.perf_counter() - start
    return Result(summarize(rec.samples, wall), rec.failures, wall)


def run(sessions: int, seconds: float, think: float = 0.0, distinct: bool = False,
        serve_args: tuple[str, ...] = ()) -> Result:
    """drive() against a fresh server (serve_args: more `rankscope serve` options) on a
    throwaway data folder."""
    with tempfile.TemporaryDirectory(prefix="rankscope-load-") as folder, \
            LiveServer(Path(folder) / "data", *serve_args) as server:
        return drive(server.url, sessions, seconds, think, distinct)


def machine() -> str:
    load = ", ".join(f"{x:.2f}" for x in os.getloadavg())
    return (f"{platform.machine()} {platform.system()}, {os.cpu_count()} cores, "
            f"load average {load}")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m rankscope.benchmarks.load",
                                 description=__doc__.split("\n")[0])
    ap.add_argument("--sessions", type=int, default=20, help="concurrent virtual users")
    ap.add_argument("--seconds", type=float, default=30.0, help="how long they edit")
    ap.add_argument("--think", type=float, default=0.0,
                    help="pause before each request, seconds (default 0: flat out)")
    ap.add_argument("--distinct-tables", action="store_true",
                    help="each user uploads its own file (the demo table less one row, "
                         "under its own name) instead of all the same one")
    ap.add_argument("--table-memory-mb", metavar="MB", default=None,
                    help="passed to the server's --table-memory-mb (default: its own)")
    args = ap.parse_args(argv)
    what = (f"{args.sessions} distinct tables (variants of {DEMO.name})" if
            args.distinct_tables else f"{DEMO.name}")
    serve_args = () if args.table_memory_mb is None else ("--table-memory-mb",
                                                         args.table_memory_mb)
    print(f"machine: {machine()} at start", flush=True)
    print(f"load: {args.sessions} sessions on {what} for {args.seconds:g} s, think "
          f"{args.think:g} s; server: python -m rankscope.cli serve on 127.0.0.1 "
          f"{' '.join(serve_args)}".rstrip(), flush=True)
    result = run(args.sessions, args.seconds, args.think, args.distinct_tables, serve_args)
    print(f"measured over {result.wall_seconds:.1f} s; machine at end: {machine()}")
    print(table_text(result.rows))
    for failure in result.failures:
        print(f"  failed: {failure}")
    return 1 if result.errors else 0


if __name__ == "__main__":
    sys.exit(main())
