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


def measure(path: Path, response: str, toggle: str, other: str,
            repeat: int) -> dict[str, tuple[float, float]]:
    """Full analysis versus one change made through the Analyst as the web app makes it
    (saved in a session store in a temporary folder): a linear one (drop `toggle`, then
    restore it, alternately: the factor path), with and without rendering the workspace
    fragment, and a nonlinear one (a new product of `toggle` and `other`: the rebuild)."""
    steps = [{"step": "response", "column": response}]
    full = _best(lambda: full_analysis(path, steps), repeat)
    with tempfile.TemporaryDirectory() as folder, Store(folder) as store:
        analyst = Analyst(StoredSessions(store), cache_size=2)
        session, _ = analyst.start(path.read_bytes(), path.name)
        sid = session.session_id
        analyst.apply(sid, Change("step", steps[0]))
        state = {"dropped": False, "products": 0}
        paths: set[str] = set()

        def change(render: bool) -> None:
            kind = "restore" if state["dropped"] else "drop"
            analyst.apply(sid, Change("step", {"step": kind, "column": toggle}))
            state["dropped"] = not state["dropped"]
            now = analyst.session(sid)
            result = analyst.current(now)
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
        change(False)
        refit = _best(lambda: change(False), repeat)
        refit_render = _best(lambda: change(True), repeat)
        rebuild = _best(nonlinear, repeat)
        if state["dropped"]:
            change(False)
    print(f"  (paths taken: {', '.join(sorted(paths))})", flush=True)
    return {"full": full, "refit": refit, "refit_render": refit_render, "rebuild": rebuild}


def generated_table(folder: Path, rows: int, cols: int, seed: int = 1) -> Path:
    """rows × cols numbers as Parquet: cols − 1 predictors (two of them exact sums of
    others, a few nearly collinear) and a response y."""
    rng = np.random.default_rng(seed)
    k = cols - 1
    X = rng.normal(size=(rows, k))
    X[:, k - 1] = X[:, 0] + X[:, 1]
    X[:, k - 2] = 2.0 * X[:, 2] - X[:, 3]
    X[:, k - 3] = X[:, 4] + 1e-3 * rng.normal(size=rows)
    y = X[:, :10] @ rng.normal(size=10) + rng.normal(size=rows)
    frame = pd.DataFrame(X, columns=[f"x{i:02d}" for i in range(k)])
    frame["y"] = y
    path = folder / f"generated_{rows}x{cols}.parquet"
    frame.to_parquet(path, index=False)
    return path


def report(name: str, t: dict[str, tuple[float, float]]) -> str:
    lines = [f"{name}:"]
    labels = {"full": "full analysis (read + recipe + diagnose)",
              "refit": "linear change + refit (factor path)",
              "refit_render": "linear change + refit + page fragment",
              "rebuild": "nonlinear change + refit (rebuild path)"}
    for key, label in labels.items():
        wall, cpu = t[key]
        ratio = "" if key == "full" else (f"  ratio {wall / t['full'][0]:.2f} wall, "
                                          f"{cpu / t['full'][1]:.2f} CPU")
        lines.append(f"  {label:<42} {wall:8.3f} s wall {cpu:8.3f} s CPU{ratio}")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=200_000)
    parser.add_argument("--cols", type=int, default=100)
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args(argv)
    print(report(f"demo {DEMO.name}", measure(DEMO, "energy_kwh", "pallets_in",
                                              "outdoor_temp_c", args.repeat)), flush=True)
    with tempfile.TemporaryDirectory() as tmp:
        path = generated_table(Path(tmp), args.rows, args.cols)
        t = measure(path, "y", "x10", "x11", args.repeat)
        print(report(f"generated {args.rows:,} × {args.cols} (Parquet)", t), flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
