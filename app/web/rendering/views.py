"""What the templates show: number formatting and the remedies offered for each column.

Shapes core results for display; no numerics beyond formatting, no HTTP, no storage.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from rankscope.design.design import INTERCEPT
from rankscope.design.names import quoted
from rankscope.web.analyst import Analysis

SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def plain(obj: Any) -> Any:
    """obj with every non-finite float replaced by None: JSON has no NaN or infinity."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: plain(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [plain(v) for v in obj]
    return obj


def num(x: Any, digits: int = 4) -> str:
    """A number in at most `digits` significant digits; None -> '—'."""
    if x is None:
        return "—"
    if isinstance(x, bool):
        return "yes" if x else "no"
    if isinstance(x, int):
        return f"{x:,}"
    if not isinstance(x, float):
        return str(x)
    if not math.isfinite(x):
        return "∞" if x > 0 else ("−∞" if x < 0 else "undefined")
    if x == 0:
        return "0"
    if 1e-4 <= abs(x) < 1e7:
        return f"{x:.{digits}g}"
    mant, exp = f"{x:.{max(digits - 2, 1)}e}".split("e")
    return f"{mant}×10{str(int(exp)).translate(SUPERSCRIPT)}"


def infinite_num(x: Any, digits: int = 4) -> str:
    """For fields where the core writes null for infinity (VIF, condition numbers)."""
    return "∞" if x is None else num(x, digits)


def iso_time(ts: float, readable: bool = False) -> str:
    """A saved time (seconds since the epoch) in local time: ISO 8601 for machines, or
    "2024-05-01 14:03" for people."""
    when = datetime.fromtimestamp(ts).astimezone()
    return when.strftime("%Y-%m-%d %H:%M") if readable else when.isoformat(timespec="seconds")


def p_value(p: Any) -> str:
    if p is None:
        return "—"
    return "< 0.0001" if p < 1e-4 else f"{p:.4f}"


@dataclass(frozen=True)
class Remedy:
    """A one-click change: the button text, a longer title, and the change to post."""

    label: str
    title: str
    change: dict[str, Any]


def _group_of(column: str, analysis: Analysis) -> str | None:
    return next((g for g, cols in analysis.groups.items() if column in cols), None)


def drop_remedy(column: str, analysis: Analysis) -> Remedy | None:
    """The change that takes one design column out of the design, when one exists."""
    if column == INTERCEPT:
        return Remedy("Leave out the intercept", "Fit without a constant column",
                      {"kind": "step", "payload": {"step": "intercept", "include": False}})
    group = _group_of(column, analysis)
    if group is not None:
        level = column[len(group) + 1 : -1]
        return Remedy(
            f"Make {level} the reference level",
            f"Code {quoted(group)} against level {quoted(level)}, so {quoted(column)} "
            "has no column of its own",
            {"kind": "step",
             "payload": {"step": "indicators", "column": group, "reference": level}},
        )
    if any(w.name == column and w.role == "predictor" for w in analysis.working):
        return Remedy(f"Drop {column}", f"Leave {quoted(column)} out of the predictors",
                      {"kind": "step", "payload": {"step": "drop", "column": column}})
    return None


def keep_remedy(column: str) -> Remedy:
    return Remedy(
        f"Keep {column} instead",
        f"Put {quoted(column)} first in the basis, so another column of the dependency is "
        "written in terms of it",
        {"kind": "keep", "payload": {"column": column}},
    )


def dependency_remedies(dep: dict[str, Any], analysis: Analysis,
                        limit: int | None = None) -> list[Remedy]:
    """For one exact dependency: drop the dependent column, keep it in place of one of the
    others, or drop one of the others (the first `limit` of these, when given)."""
    out: list[Remedy] = []
    first = drop_remedy(dep["column"], analysis)
    if first is not None:
        out.append(first)
    out.append(keep_remedy(dep["column"]))
    for other in dep["combination"]:
        if limit is not None and len(out) >= limit:
            break
        r = drop_remedy(other, analysis)
        if r is not None and other != INTERCEPT:
            out.append(r)
    return out


def vif_rows(diagnosis: dict[str, Any]) -> list[dict[str, Any]]:
    """VIF, tolerance and (for grouped columns) GVIF rows for the sortable table."""
    group_of = {c: g for g, info in diagnosis.get("gvif", {}).items() for c in info["columns"]}
    rows = []
    for col, v in diagnosis["vif"].items():
        g = group_of.get(col)
        info = diagnosis["gvif"].get(g) if g else None
        rows.append({
            "column": col,
            "vif": v,
            "tolerance": diagnosis["tolerance"].get(col),
            "se_inflation": (diagnosis.get("se_inflation") or {}).get(col),
            "group": g,
            "gvif_scaled": info["gvif_scaled"] if info else None,
            "infinite": v is None,
        })
    return rows


def index_rows(diagnosis: dict[str, Any]) -> list[dict[str, Any]]:
    """Condition-index rows, largest index first. A row is flagged when the core listed it
    among the near-dependencies (same index and the same proportions)."""
    rows = []
    near = diagnosis["near_dependencies"]
    for k, idx in enumerate(diagnosis["condition_indices"]):
        props = diagnosis["variance_proportions"][k]
        match = None if props is None else next(
            (n for n in near if n["index"] == idx
             and all(props.get(c) == p for c, p in n["proportions"].items())),
            None,
        )
        rows.append({
            "position": k + 1,
            "index": idx,
            "exact": diagnosis["index_exact"][k],
            "proportions": props,
            "flagged": match is not None,
            "involved": set(match["columns"]) if match else set(),
        })
    rows.reverse()
    return rows
