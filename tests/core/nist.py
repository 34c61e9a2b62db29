"""Loading the NIST StRD linear least-squares problems and scoring accuracy (LRE)."""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np

DATA = Path(__file__).resolve().parents[1] / "data" / "nist_strd_lls.json"


def problems() -> dict:
    """Source: NIST Statistical Reference Datasets, linear least squares (tests/data copy)."""
    return json.loads(DATA.read_text())


def design(prob: dict) -> tuple[np.ndarray, list[str], np.ndarray]:
    cols = list(prob["X"])
    X = np.column_stack([np.asarray(prob["X"][c], dtype=float) for c in cols])
    if prob["intercept"]:
        X = np.column_stack([np.ones(X.shape[0]), X])
        cols = ["(intercept)"] + cols
    return X, cols, np.asarray(prob["y"], dtype=float)


def lre(estimate: float, certified: float) -> float:
    """Log relative error (number of correct significant digits), capped at 15;
    absolute error where the certified value is 0 (McCullough, Am. Stat. 52, 1998)."""
    err = abs(estimate - certified)
    if err == 0:
        return 15.0
    rel = err / abs(certified) if certified != 0 else err
    return min(15.0, -math.log10(rel))
