"""Memory benchmark for streaming: write a large CSV with planted collinearity, stream it in a
child process, report its peak memory against the goal (5 GB of CSV under 1.5 GB of memory).

A script (python -m rankscope.benchmarks.stream --gb 5); the file lives in a temporary folder that
is deleted afterwards. Not imported by the app.
"""

from __future__ import annotations

import argparse
import json
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pyarrow as pa
import pyarrow.csv as pacsv

GOAL_BYTES = 1.5e9
CHUNK_ROWS = 200_000
LEVELS = np.array(["alpha", "beta", "gamma", "delta", "epsilon"])
#: The planted exact relation, as rankscope should write it (x4 in terms of the others).
PLANTED = {"x1": 1.0, "x2": 2.0, "x3": -1.0}


def chunk(rng: np.random.Generator, rows: int) -> pa.Table:
    """Rows of x1..x6, a category g and y: x4 = x1 + 2·x2 − x3 exactly (to rounding),
    x5 nearly 0.5·x1 − x6 (a near dependency), y a noisy combination."""
    x1, x2, x3, x6 = (rng.normal(m, s, rows) for m, s in ((5, 2), (-3, 1), (0, 4), (1, 1)))
    x4 = x1 + 2 * x2 - x3
    x5 = 0.5 * x1 - x6 + rng.normal(0, 1e-3, rows)
    g = LEVELS[rng.integers(0, len(LEVELS), rows)]
    y = 2 * x1 - x2 + 0.5 * x6 + rng.normal(0, 1, rows)
    cols = {"x1": x1, "x2": x2, "x3": x3, "x4": x4, "x5": x5, "x6": x6, "g": g, "y": y}
    return pa.table(cols)


def write_csv(path: Path, size: int, seed: int = 0) -> int:
    """Write about `size` bytes of CSV in chunks (never the whole table in memory); rows."""
    rng = np.random.default_rng(seed)
    rows = 0
    with pa.OSFile(str(path), "wb") as sink:
        writer = None
        while sink.tell() < size:
            # A small first chunk measures the bytes per row, so small files come out right.
            want = CHUNK_ROWS if rows else 1000
            if rows:
                want = min(want, max(1, int((size - sink.tell()) * rows / sink.tell())))
            t = chunk(rng, want)
            if writer is None:
                writer = pacsv.CSVWriter(sink, t.schema)
            writer.write_table(t)
            rows += t.num_rows
        if writer is not None:
            writer.close()
    return rows


def child(path: str) -> None:
    """Stream the file and print what was found with this process's peak memory (JSON)."""
    from rankscope.core.diagnosis import diagnose_factor
    from rankscope.scale.stream import stream_factor

    started = time.monotonic()
    F, info = stream_factor(path, [{"step": "response", "column": "y"}])
    d = diagnose_factor(F, response=info.response, groups=info.groups)
    secs = time.monotonic() - started
    peak_kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss  # KiB on Linux
    print(json.dumps({
        "rows": info.layout.rows_used, "seconds": secs, "peak_bytes": peak_kb * 1024,
        "rank": d.rank, "columns": d.columns, "blocks": info.blocks,
        "dependencies": [{"column": r["column"], "combination": r["combination"]}
                         for r in d.dependencies],
        "near_index": max((x for x, exact in zip(d.condition_indices, d.index_exact, strict=True)
                           if x is not None and not exact), default=None),
        "exact": sum(d.index_exact),
    }))


def planted_found(deps: list[dict]) -> bool:
    """The planted relation x4 = x1 + 2·x2 − x3, in whichever column it was written."""
    for r in deps:
        combo = {**r["combination"], r["column"]: -1.0}
        v = {k: combo.get(k, 0.0) for k in ("x1", "x2", "x3", "x4")}
        scale = -v["x4"] if v["x4"] else 0.0
        if scale and all(abs(v[k] / scale - PLANTED[k]) < 1e-8 for k in PLANTED):
            return True
    return False


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m rankscope.benchmarks.stream",
                                 description="Peak memory of streaming a large CSV.")
    size = ap.add_mutually_exclusive_group()
    size.add_argument("--gb", type=float, help="file size in GB (1e9 bytes)")
    size.add_argument("--mb", type=float, help="file size in MB (1e6 bytes)")
    ap.add_argument("--dir", help="where to write the file (default: the system temp folder)")
    ap.add_argument("--child", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.child:
        child(args.child)
        return 0
    nbytes = int((args.gb or 0) * 1e9 or (args.mb or 0) * 1e6 or 5e9)
    base = Path(args.dir or tempfile.gettempdir())
    free = shutil.disk_usage(base).free
    if free < 1.2 * nbytes:
        print(f"not enough disk in {base}: {free / 1e9:.1f} GB free, {nbytes / 1e9:.1f} GB "
              "needed (choose a smaller size or --dir)", file=sys.stderr)
        return 2
    folder = Path(tempfile.mkdtemp(prefix="rankscope-bench-", dir=base))
    try:
        path = folder / "planted.csv"
        t0 = time.monotonic()
        rows = write_csv(path, nbytes)
        written = path.stat().st_size
        print(f"wrote {written / 1e6:,.0f} MB of CSV, {rows:,} rows, in "
              f"{time.monotonic() - t0:.0f} s")
        out = subprocess.run([sys.executable, "-m", "rankscope.benchmarks.stream", "--child",
                              str(path)], capture_output=True, text=True, check=False)
        if out.returncode != 0:
            print(out.stderr, file=sys.stderr)
            return 1
        r = json.loads(out.stdout.strip().splitlines()[-1])
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    met = r["peak_bytes"] < GOAL_BYTES
    print(f"streamed {r['rows']:,} rows in {r['seconds']:.1f} s "
          f"({written / 1e6 / r['seconds']:.0f} MB/s, {r['blocks']} blocks)")
    print(f"peak memory (ru_maxrss of the streaming process): {r['peak_bytes'] / 1e9:.3f} GB")
    print(f"rank {r['rank']} of {len(r['columns'])} columns; planted x4 = x1 + 2·x2 − x3 "
          f"{'found' if planted_found(r['dependencies']) else 'NOT found'}; "
          f"{r['exact']} exact dimension(s); largest other condition index "
          f"{r['near_index']:.3g} (planted near relation x5 ≈ 0.5·x1 − x6)")
    print(f"goal (peak < {GOAL_BYTES / 1e9:.1f} GB for the file): {'met' if met else 'NOT met'}")
    return 0 if met else 1


if __name__ == "__main__":
    raise SystemExit(main())
