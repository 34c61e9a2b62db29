"""Measuring helpers for the benchmark: best-of timing, the per-column regression loop,
peak memory in a child process and a description of the machine. Asserts no goal.
"""

from __future__ import annotations

import json
import os
import platform
import subprocess
import sys
import time
import warnings
from collections.abc import Callable

import numpy as np


def best_of(fn: Callable[[], object], repeats: int) -> float:
    """Smallest wall time of `repeats` calls: the least disturbed by other work."""
    best = float("inf")
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t)
    return best


def regression_loop(X: np.ndarray, columns: list[int]) -> tuple[list[float], float]:
    """VIF of each given column by one auxiliary least-squares regression on all the other
    columns (statsmodels OLS), 1 / (1 − R²_j): the loop the factor replaces.

    Returns the VIFs and the seconds the loop took (the import is not counted).
    """
    import statsmodels.api as sm  # test-only dependency, imported only when measuring

    out = []
    start = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # it warns that planted relations are rank deficient
        for j in columns:
            others = np.delete(X, j, axis=1)
            r2 = sm.OLS(X[:, j], others).fit().rsquared
            out.append(1.0 / (1.0 - r2) if r2 < 1.0 else float("inf"))
    return out, time.perf_counter() - start


def peak_memory(n: int, p: int, seed: int = 0) -> tuple[int, int]:
    """(matrix bytes, peak traced bytes) of one diagnosis, in a fresh Python process."""
    done = subprocess.run(
        [sys.executable, "-m", "rankscope.scale.memory", str(n), str(p), str(seed)],
        capture_output=True, text=True, check=True,
    )
    got = json.loads(done.stdout.strip().splitlines()[-1])
    return int(got["matrix_bytes"]), int(got["peak_bytes"])


def _blas() -> str:
    try:
        from threadpoolctl import threadpool_info  # optional; more precise when present

        return "; ".join(f"{i.get('internal_api')} {i.get('version')} "
                         f"({i.get('num_threads')} threads)" for i in threadpool_info())
    except ImportError:
        pass
    try:
        info = np.show_config(mode="dicts")["Build Dependencies"]["blas"]
        return f"{info.get('name')} {info.get('version')}"
    except Exception:  # show_config's layout differs between numpy versions
        return "unknown"


THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


def threads_note() -> str:
    set_ = [f"{v}={os.environ[v]}" for v in THREAD_VARIABLES if v in os.environ]
    return ", ".join(set_) if set_ else "BLAS threads: library default"


def machine() -> list[str]:
    """Lines describing where the numbers were measured."""
    cores = os.cpu_count()
    usable = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else cores
    load = ", ".join(f"{x:.1f}" for x in os.getloadavg()) if hasattr(os, "getloadavg") else "?"
    return [
        f"machine: {platform.machine()} {platform.system()}, {cores} cores ({usable} usable), "
        f"load average {load} at start",
        f"python {platform.python_version()}, numpy {np.__version__}, BLAS: {_blas()}; "
        f"{threads_note()}",
    ]
