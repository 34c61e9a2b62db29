"""Helpers for the streaming tests: the in-memory reference and a field-by-field comparison.

Checking code only; which side is right is said where it is used.
"""

from __future__ import annotations

import math
from pathlib import Path

from rankscope.core.diagnosis import diagnose, diagnose_factor
from rankscope.design.recipe import Recipe, build_design
from rankscope.scale.stream import stream_factor
from rankscope.tables.read import read_table

REL = 1e-10
#: Fields that exist only with the rows in memory (rank correlations, residuals on rows,
#: extended-precision refinement steps) or are wording.
ROWS_ONLY = {"residual_rows", "verified", "spearman", "refinement_steps", "notes"}
#: p-values live in [0, 1], far in the tail their relative error says nothing; an exact
#: relation's residual (relative to its column's length) is rounding, near 1e-15.
ABSOLUTE = {"p_values", "f_p_value", "residual"}
#: Beyond this, a condition index belongs to an exact dependency: its value is rounding.
ROUNDING_INDEX = 1e8


def in_memory(path: Path, steps: list[dict]) -> tuple[dict, object]:
    """The reference: diagnose(build_design(read_table(path), recipe)), the in-memory analysis."""
    d = build_design(read_table(path), Recipe(steps))
    diag = diagnose(d.X, d.columns, d.y, response=d.response, groups=d.groups)
    return diag.to_dict(), d


def streamed(path: Path, steps: list[dict], **kw) -> tuple[dict, object]:
    F, info = stream_factor(path, steps, **kw)
    diag = diagnose_factor(F, response=info.response, groups=info.groups)
    return diag.to_dict(), info


def _numbers(v) -> list[float]:
    if isinstance(v, dict):
        v = list(v.values())
    return [abs(x) for x in v if isinstance(x, int | float) and not isinstance(x, bool)
            and math.isfinite(x)]


def _walk(a, b, path: str, scale: float, deficient: bool, out: list[str]) -> None:
    last = path.rsplit(".", 1)[-1]
    if last in ROWS_ONLY:
        return
    if deficient and (last == "variance_proportions" or last == "near_dependencies"):
        return  # proportions of an exact dependency's dimension are rounding noise
    if isinstance(a, dict):
        if not isinstance(b, dict) or set(a) - ROWS_ONLY != set(b) - ROWS_ONLY:
            out.append(f"{path}: keys {sorted(a)} vs {sorted(b) if isinstance(b, dict) else b}")
            return
        inner = max(_numbers(a), default=0.0)
        for k in set(a) - ROWS_ONLY:
            _walk(a[k], b[k], f"{path}.{k}", inner, deficient, out)
    elif isinstance(a, list):
        if not isinstance(b, list) or len(a) != len(b):
            out.append(f"{path}: length {len(a)} vs {len(b) if isinstance(b, list) else b}")
            return
        inner = max(_numbers(a), default=0.0)
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            if last == "condition_indices" and (x is None or x > ROUNDING_INDEX):
                continue
            _walk(x, y, f"{path}[{i}]", inner, deficient, out)
    elif isinstance(a, float | int) and not isinstance(a, bool):
        if not isinstance(b, float | int) or isinstance(b, bool):
            out.append(f"{path}: {a} vs {b}")
            return
        absolute = any(part in ABSOLUTE for part in path.replace("[", ".").split("."))
        room = REL if absolute else REL * max(abs(a), scale)
        if abs(a - b) > room:
            out.append(f"{path}: {a!r} vs {b!r}")
    elif a != b:
        out.append(f"{path}: {a!r} vs {b!r}")


def differences(got: dict, ref: dict) -> list[str]:
    """Where the streamed diagnosis differs from the reference beyond 1e-10 relative."""
    out: list[str] = []
    _walk(ref, got, "", 0.0, not ref["full_rank"], out)
    return out
