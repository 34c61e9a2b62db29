"""Seeded random tables with planted structure for the API tests, and a JSON comparison."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd


def planted(n: int = 240, seed: int = 7, missing: bool = False) -> pd.DataFrame:
    """Columns u, v, w = u − 2v (an exact dependency), z ≈ u (near-collinear), a group g
    with three levels, and a response y. With missing=True a few cells are empty."""
    rng = np.random.default_rng(seed)
    u = rng.normal(3.0, 1.0, n)
    v = rng.normal(-1.0, 2.0, n)
    g = rng.choice(["east", "north", "south"], n)
    frame = pd.DataFrame({
        "u": u,
        "v": v,
        "w": u - 2.0 * v,
        "z": u + rng.normal(0.0, 0.05, n),
        "g": g,
        "y": 2.0 + u - 0.5 * v + (g == "north") * 1.5 + rng.normal(0.0, 0.3, n),
    })
    if missing:
        frame.loc[rng.choice(n, 9, replace=False), "v"] = np.nan
        frame.loc[rng.choice(n, 5, replace=False), "y"] = np.nan
    return frame


def write_csv(frame: pd.DataFrame, folder: Path, name: str = "planted.csv") -> Path:
    path = folder / name
    # repr precision, so the CSV reads back to the very same doubles
    frame.to_csv(path, index=False, float_format="%.17g")
    return path


def assert_close(a: Any, b: Any, path: str = "", rel: float = 1e-12) -> None:
    """Equal JSON documents: same keys, lists and strings; numbers within rel (relative to
    the larger, or absolute below 1)."""
    if isinstance(a, dict):
        assert isinstance(b, dict), path
        assert sorted(a) == sorted(b), f"{path}: keys {sorted(a)} != {sorted(b)}"
        for k in a:
            assert_close(a[k], b[k], f"{path}.{k}", rel)
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), f"{path}: {a!r} != {b!r}"
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            assert_close(x, y, f"{path}[{i}]", rel)
    elif isinstance(a, bool) or a is None or isinstance(a, str):
        assert a == b, f"{path}: {a!r} != {b!r}"
    elif isinstance(a, int | float):
        assert isinstance(b, int | float) and not isinstance(b, bool), f"{path}: {b!r}"
        scale = max(1.0, abs(a), abs(b))
        assert math.isclose(a, b, rel_tol=0, abs_tol=rel * scale), f"{path}: {a!r} != {b!r}"
    else:
        raise AssertionError(f"{path}: unexpected {type(a).__name__}")
