"""Benchmark: server time of a linear and a nonlinear design change + refit vs a full analysis.

Times the same calls the web app makes (python -m rankscope.benchmarks.refit); asserts nothing.
"""

from __future__ import annotations

import argparse
import statistics
import tempfile
import time
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pandas as pd

from rankscope.core import diagnose
from rankscope.design.recipe import Recipe, build_design
from rankscope.store import Store
from rankscope.tables.read import read_table
from rankscope.web.analyst import Analyst
from rankscope.web.rendering.render import workspace_html
from rankscope.web.state import Change
from rankscope.web.stored import StoredSessions

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_data" / "cold_storage.csv"


def _best(fn: Callable[[], object], repeat: int) -> tuple[float, float]:
    """Median wall-clock and median CPU seconds of `repeat` runs. CPU time (all threads
    of this process) is the steadier figure on a machine shared with other work."""
    wall, cpu = [], []
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        fn()
        wall.append(time.perf_counter() - t0)
        cpu.append(time.process_time() - c0)
    return statistics.median(wall), statistics.median(cpu)


def full_analysis(path: Path, steps: list[dict]) -> None:
    """What a first look costs: read the file, replay the recipe, diagnose (as the plain
    dict every view reads)."""
    table = read_table(str(path))
    design = build_design(table, Recipe(steps))
    diagnose(design.X, design.columns, design.y, response=design.response,
             groups=design.groups).to_dict()


def measure(path: Path, response: str, toggle: str, other: str, repeat: int,
            wide: bool = False) -> dict[str, tuple[float, float]]:
    """Full analysis versus one change made through the Analyst as the web app makes it
    (saved in a session store in a temporary folder): the first analysis (choosing the
    response: the one build from the rows), a linear change (drop `toggle`, then restore it,
    alternately: the factor path), with and without rendering the workspace fragment, and
    a nonlinear one (a new product of `toggle` and `other`: the rebuild). wide: only the
    first analysis and the linear change, each change timed on its own ("slowest")."""
    steps = [{"step": "response", "column": response}]
    full = _best(lambda: full_analysis(path, steps), 1 if wide else repeat)
    out = {"full": full}
    with tempfile.TemporaryDirectory() as folder, Store(folder) as store:
        analyst = Analyst(StoredSessions(store), cache_size=2)
        session, _ = analyst.start(path.read_bytes(), path.name)
        sid = session.session_id
        out["first"] = _best(lambda: analyst.apply(sid, Change("step", steps[0])), 1)
        state = {"dropped": False, "products": 0}
        paths: set[str] = set()
        each: list[float] = []

        def change(render: bool) -> None:
            kind = "restore" if state["dropped"] else "drop"
            t0 = time.perf_counter()
            analyst.apply(sid, Change("step", {"step": kind, "column": toggle}))
            state["dropped"] = not state["dropped"]
            now = analyst.session(sid)
            result = analyst.current(now)
            each.append(time.perf_counter() - t0)
            paths.add(f"linear: {result.path}")
            if render:
                workspace_html(analyst, now, result)

        def nonlinear() -> None:
            state["products"] += 1
            name = f"{toggle}_by_{other}_{state['products']}"
            analyst.apply(sid, Change("step", {"step": "product", "columns": [toggle, other],
                                             "name": name}))
            paths.add(f"nonlinear: {analyst.current(analyst.session(sid)).path}")

        change(False)  # the first change after the start builds the engine: not timed
        if not wide:
            change(False)
        each.clear()
        out["refit"] = _best(lambda: change(False), repeat)
        out["slowest"] = (max(each), float("nan"))
        if not wide:
            out["refit_render"] = _best(lambda: change(True), repeat)
            out["rebuild"] = _best(nonlinear, repeat)
        if state["dropped"]:
            change(False)
    print(f"  (paths taken: {', '.join(sorted(paths))})", flush=True)
    return out


def generated_table(folder: Path, rows: int, cols: int, seed: int = 1) -> Path:
    """rows × cols numbers as Parquet: cols − 1 predictors x00, x01, … and a response y.
    With 8 predictors or more, two are exact sums of others and one is nearly collinear."""
    if cols < 3:
        raise SystemExit("--cols must be at least 3 (two predictors and the response)")
    rng = np.random.default_rng(seed)
    k = cols - 1
    X = rng.normal(size=(rows, k))
    if k >= 8:  # the planted columns are then distinct from the ones they are made of
        X[:, k - 1] = X[:, 0] + X[:, 1]
        X[:, k - 2] = 2.0 * X[:, 2] - X[:, 3]
        X[:, k - 3] = X[:, 4] + 1e-3 * rng.normal(size=rows)
    m = min(10, k)
    y = X[:, :m] @ rng.normal(size=m) + rng.normal(size=rows)
    frame = pd.DataFrame(X, columns=[f"x{i:02d}" for i in range(k)])
    frame["y"] = y
    path = folder / f"generated_{rows}x{cols}.parquet"
    frame.to_parquet(path, index=False)
    return path


def toggled(cols: int) -> tuple[str, str]:
    """The column the generated table's linear change drops and restores, and the other
    factor of its product: x10 and x11 when there are that many predictors."""
    k = cols - 1
    j = min(10, k - 2)
    return f"x{j:02d}", f"x{j + 1:02d}"


def categorical_table(folder: Path, rows: int, cols: int, seed: int = 2) -> Path:
    """A design of `cols` columns from a category: five numbers x0..x4, a category `store`
    with cols − 5 levels (cols − 6 indicators beside the intercept) and a response y."""
    rng = np.random.default_rng(seed)
    levels = max(2, cols - 5)
    frame = pd.DataFrame({f"x{i}": rng.normal(size=rows) for i in range(5)})
    frame["store"] = [f"s{i:04d}" for i in rng.integers(0, levels, size=rows)]
    frame["y"] = frame["x0"] - frame["x1"] + rng.normal(size=rows)
    path = folder / f"category_{rows}x{cols}.parquet"
    frame.to_parquet(path, index=False)
    return path


def report(name: str, t: dict[str, tuple[float, float]]) -> str:
    lines = [f"{name}:"]
    labels = {"full": "full analysis (read + recipe + diagnose)",
              "first": "first analysis in the web app (response)",
              "refit": "linear change + refit (factor path)",
              "slowest": "slowest linear change (wall)",
              "refit_render": "linear change + refit + page fragment",
              "rebuild": "nonlinear change + refit (rebuild path)"}
    for key, label in labels.items():
        if key not in t:
            continue
        wall, cpu = t[key]
        if key == "slowest":
            lines.append(f"  {label:<42} {wall:8.3f} s wall{'':17}  ratio "
                         f"{wall / t['full'][0]:.2f} wall")
            continue
        ratio = "" if key == "full" else (f"  ratio {wall / t['full'][0]:.2f} wall, "
                                          f"{cpu / t['full'][1]:.2f} CPU")
        lines.append(f"  {label:<42} {wall:8.3f} s wall {cpu:8.3f} s CPU{ratio}")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=200_000)
    parser.add_argument("--cols", type=int, default=100)
    parser.add_argument("--repeat", type=int, default=3)
    parser.add_argument("--wide", type=int, nargs="*", metavar="COLS",
                        help="also wide designs at --wide-rows rows: numeric and from a "
                             "category, each of these many columns (default 1000 2000)")
    parser.add_argument("--wide-rows", type=int, default=20_000)
    parser.add_argument("--skip-narrow", action="store_true",
                        help="only the wide cases")
    args = parser.parse_args(argv)
    if args.cols < 3:
        parser.error("--cols must be at least 3 (two predictors and the response)")
    if not args.skip_narrow:
        print(report(f"demo {DEMO.name}", measure(DEMO, "energy_kwh", "pallets_in",
                                                  "outdoor_temp_c", args.repeat)), flush=True)
        with tempfile.TemporaryDirectory() as tmp:
            path = generated_table(Path(tmp), args.rows, args.cols)
            t = measure(path, "y", *toggled(args.cols), args.repeat)
            print(report(f"generated {args.rows:,} × {args.cols} (Parquet)", t), flush=True)
    if args.wide is not None:
        for cols in args.wide or [1000, 2000]:
            with tempfile.TemporaryDirectory() as tmp:
                # cols − 1 predictors and y: with the intercept, cols design columns
                path = generated_table(Path(tmp), args.wide_rows, cols)
                t = measure(path, "y", *toggled(cols), args.repeat, wide=True)
                print(report(f"wide numbers {args.wide_rows:,} × {cols} design columns", t),
                      flush=True)
                path = categorical_table(Path(tmp), args.wide_rows, cols)
                t = measure(path, "y", "x1", "x2", args.repeat, wide=True)
                print(report(f"wide category {args.wide_rows:,} × {cols} design columns", t),
                      flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
