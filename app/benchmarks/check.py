"""Whole-process benchmark of `rankscope check` against a fresh-process pyarrow read + lstsq.

`python -m rankscope.benchmarks.check [--quick] [--repeat N]` prints one table of wall-time
ratios with each goal beside it; it asserts nothing and never hides a miss.

Each case writes a table of random columns (planted: y depends on the first five; "with
dependencies" adds an exact dependency and four near pairs, so remedies are previewed) into a
temporary folder, then times in fresh interpreters, alternately: `python -m rankscope check
FILE --response y` (the terminal report, and the same with --json), and the baseline, which
reads the same file with pyarrow (pyarrow.csv or pyarrow.parquet), stacks the matrix with a
constant column and solves it with numpy.linalg.lstsq. Every process reads its bytecode from
a folder of the run's own, written by one untimed run of each beforehand, as an installed
package has it (PYTHONDONTWRITEBYTECODE would otherwise have an editable install compile the
command's modules in every run). The best wall time of each is kept. The
import row sums Python's -X importtime over the modules `check` loads and the baseline does
not (the goal: what the command imports beyond the baseline's numpy and pyarrow), beside the
totals of both; the baseline's include pandas, which pyarrow's to_numpy imports. Timings
depend on the machine and its load (printed).
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

import numpy as np

#: (label, rows, columns, format, goal: check / baseline wall time, planted dependencies).
#: A design with dependencies has remedies to preview (see write_table); one without has none.
CASES = {
    "full": [("10,000 × 20 CSV", 10_000, 20, "csv", 1.5, False),
             ("200,000 × 100 Parquet", 200_000, 100, "parquet", 1.0, False),
             ("20,000 × 1,000 Parquet", 20_000, 1_000, "parquet", 1.5, False),
             ("20,000 × 1,000 Parquet with dependencies", 20_000, 1_000, "parquet", 1.5, True)],
    "quick": [("2,000 × 10 CSV", 2_000, 10, "csv", 1.5, False),
              ("20,000 × 20 Parquet", 20_000, 20, "parquet", 1.0, False),
              ("2,000 × 100 Parquet", 2_000, 100, "parquet", 1.5, False),
              ("2,000 × 100 Parquet with dependencies", 2_000, 100, "parquet", 1.5, True)],
}
REPEATS = {"full": 3, "quick": 1}
#: Seconds the command's own imports may take beyond the baseline's (numpy, pyarrow).
IMPORT_SECONDS = 0.3
#: The fewest runs the import row takes its best of: a sum of 300 small timings, it moves
#: with the machine's load far more than one process's wall time, and a run costs a second.
IMPORT_REPEATS = 5

#: The baseline, run as `python -c BASELINE FILE`: read with pyarrow, least squares by numpy.
BASELINE = """\
import sys
import numpy as np
path = sys.argv[1]
if path.endswith(".parquet"):
    import pyarrow.parquet as pq
    t = pq.read_table(path)
else:
    import pyarrow.csv as pc
    t = pc.read_csv(path)
names = [c for c in t.column_names if c != "y"]
X = np.column_stack([np.ones(t.num_rows)] + [t[c].to_numpy() for c in names])
np.linalg.lstsq(X, t["y"].to_numpy(), rcond=None)
"""


@dataclass
class Row:
    what: str
    measured: str
    goal: str
    verdict: str


def write_table(folder: Path, n: int, p: int, fmt: str, seed: int = 0,
                dependent: bool = False) -> Path:
    """Random columns x0..x{p-1} and y = x0 + … + x4 + noise, as CSV or Parquet. dependent:
    the last column is x0 + x1 (an exact dependency) and the four before it are x5..x8 plus
    noise of 1/1000 of their spread (near pairs), as a total beside its parts and copied
    columns would give."""
    rng = np.random.default_rng(seed)
    X = rng.standard_normal((n, p))
    if dependent:
        X[:, p - 1] = X[:, 0] + X[:, 1]
        for k in range(4):
            X[:, p - 2 - k] = X[:, 5 + k] + 1e-3 * rng.standard_normal(n)
    y = X[:, : min(5, p)].sum(axis=1) + rng.standard_normal(n)
    names = [f"x{j}" for j in range(p)]
    path = folder / f"table_{n}x{p}{'_dependent' if dependent else ''}.{fmt}"
    if fmt == "parquet":
        import pyarrow as pa
        import pyarrow.parquet as pq

        cols = {c: X[:, j] for j, c in enumerate(names)} | {"y": y}
        pq.write_table(pa.table(cols), path)
    else:
        with path.open("w", encoding="utf-8") as f:
            f.write(",".join([*names, "y"]) + "\n")
            np.savetxt(f, np.column_stack([X, y]), delimiter=",", fmt="%.17g")
    return path


#: The environment of the timed processes (set by main): bytecode cached in a folder of the
#: run's own, as a user's installed rankscope has it. Without it, where PYTHONDONTWRITEBYTECODE
#: is set (or the package folder is not writable), an editable install compiles every module
#: of the command again in each process (about 0.08 s of a small `check`), while the
#: baseline's packages come with their bytecode.
ENV: dict[str, str] | None = None


def cached_bytecode(folder: Path) -> dict[str, str]:
    """os.environ with Python's bytecode written to and read from `folder`."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    env["PYTHONPYCACHEPREFIX"] = str(folder)
    return env


def wall(cmd: list[str]) -> float:
    """Wall time of one fresh process (its output thrown away); raises when it fails."""
    start = time.perf_counter()
    done = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
                          env=ENV)
    took = time.perf_counter() - start
    if done.returncode != 0:
        raise RuntimeError(f"{' '.join(cmd)} failed: {done.stderr.strip()[-500:]}")
    return took


def import_seconds(cmd: list[str]) -> dict[str, float]:
    """-X importtime's own time (seconds) of each module the process imports."""
    done = subprocess.run([sys.executable, "-X", "importtime", *cmd], stdout=subprocess.DEVNULL,
                          stderr=subprocess.PIPE, text=True, env=ENV)
    own: dict[str, float] = {}
    for line in done.stderr.splitlines():
        head, _, rest = line.partition("|")
        if line.startswith("import time:") and rest and head.split(":")[1].strip().isdigit():
            name = rest.partition("|")[2].strip()
            own[name] = own.get(name, 0.0) + int(head.split(":")[1]) / 1e6
    return own


def _verdict(ratio: float, goal: float) -> str:
    return "met" if ratio <= goal else "MISSED"


def commands(path: Path) -> dict[str, list[str]]:
    """The timed processes on one file."""
    check = [sys.executable, "-m", "rankscope", "check", str(path), "--response", "y"]
    return {"check": check, "check --json": [*check, "--json"],
            "baseline": [sys.executable, "-c", BASELINE, str(path)]}


def warm_up(folder: Path, formats: set[str]) -> None:
    """One untimed run of each process on a small table of each format: writes the bytecode
    of what they import (the later runs read it)."""
    for fmt in sorted(formats):
        for cmd in commands(write_table(folder, 200, 6, fmt)).values():
            wall(cmd)


def case_rows(label: str, path: Path, goal: float, repeats: int) -> list[Row]:
    runs = commands(path)
    best = dict.fromkeys(runs, float("inf"))
    for r in range(repeats):
        order = list(runs) if r % 2 == 0 else list(reversed(runs))  # alternate who goes first
        for name in order:
            best[name] = min(best[name], wall(runs[name]))
    rows = []
    for name in ("check", "check --json"):
        ratio = best[name] / best["baseline"]
        rows.append(Row(f"{label}: `{name}` / pyarrow read + lstsq",
                        f"{ratio:.2f}× ({best[name]:.2f} s / {best['baseline']:.2f} s)",
                        f"≤ {goal:g}×", _verdict(ratio, goal)))
    return rows


def import_row(path: Path, repeats: int = 1) -> Row:
    """The own times of the modules `check` imports that the baseline does not, best of
    `repeats`. A module-by-module difference, not a difference of totals: the baseline also
    loads pandas (pyarrow's to_numpy imports it), which must not pay for the command's
    imports."""
    best = None
    for _ in range(repeats):
        ours = import_seconds(["-m", "rankscope", "check", str(path), "--response", "y"])
        theirs = import_seconds(["-c", BASELINE, str(path)])
        extra = sum(t for name, t in ours.items() if name not in theirs)
        if best is None or extra < best[0]:
            best = (extra, sum(ours.values()), sum(theirs.values()))
    assert best is not None
    extra, all_ours, all_theirs = best
    return Row("imports of `check` beyond the baseline's (numpy, pyarrow)",
               f"{extra:.2f} s ({all_ours:.2f} s all, baseline {all_theirs:.2f} s)",
               f"≤ {IMPORT_SECONDS} s", "met" if extra <= IMPORT_SECONDS else "MISSED")


def render(rows: list[Row]) -> str:
    head = ("what", "measurement", "goal", "verdict")
    widths = [max(len(h), *(len(getattr(r, f)) for r in rows))
              for h, f in zip(head, ("what", "measured", "goal", "verdict"), strict=True)]
    lines = ["| " + " | ".join(h.ljust(w) for h, w in zip(head, widths, strict=True)) + " |",
             "|" + "|".join("-" * (w + 2) for w in widths) + "|"]
    for r in rows:
        cells = (r.what, r.measured, r.goal, r.verdict)
        lines.append("| " + " | ".join(c.ljust(w) for c, w in zip(cells, widths, strict=True))
                     + " |")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small tables (a smoke run)")
    parser.add_argument("--repeat", type=int, default=None, help="timed runs of each process")
    args = parser.parse_args(argv)
    mode = "quick" if args.quick else "full"
    repeats = args.repeat or REPEATS[mode]
    rows: list[Row] = []
    global ENV
    with tempfile.TemporaryDirectory() as tmp:
        ENV = cached_bytecode(Path(tmp) / "bytecode")
        warm_up(Path(tmp), {case[3] for case in CASES[mode]})
        for label, n, p, fmt, goal, dependent in CASES[mode]:
            path = write_table(Path(tmp), n, p, fmt, dependent=dependent)
            rows += case_rows(label, path, goal, repeats)
            if fmt == "csv":
                rows.append(import_row(path, max(repeats, IMPORT_REPEATS)))
    load = ", ".join(f"{x:.1f}" for x in os.getloadavg())
    print(f"mode: {mode}, best of {repeats} fresh processes each (bytecode cached); "
          f"{os.cpu_count()} cores, load average {load}")
    print(render(rows))
    missed = sum(r.verdict == "MISSED" for r in rows)
    print(f"{missed} goal(s) MISSED" if missed else "every goal met")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
