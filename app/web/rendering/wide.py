"""What the page of a wide design leads with: the columns that matter, the groups of columns
that move together, and the block-by-block summary of the correlations with each block's own.

Shapes a Diagnosis dict for display (the grouping is app/core/grouping); no HTTP, no HTML.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Callable
from dataclasses import dataclass
from itertools import chain
from typing import Any, TypeVar

import numpy as np

from rankscope.core.grouping import Block, block_extremes, blocks, groups_together, strongest
from rankscope.report.cautions import VIF_MARK
from rankscope.report.figures import block_heatmap, block_summary_heatmap

T = TypeVar("T")

#: Above this many design columns the page leads with the columns that matter and shows its
#: full tables a page at a time. At 40 columns the index table already has 1,600 cells and
#: the heatmap reaches its full height (900 px at 22 px a name): past that, names overlap
#: and a table no longer fits a screen, so a person reads neither.
WIDE_COLUMNS = 40

#: How much the lead section lists (the rest is in the full tables and the downloads).
FOCUS_VIF = 12
FOCUS_NEAR = 10
FOCUS_GROUPS = 12
FOCUS_NAMES = 12  # names shown per group or per list before "and N more"
FOCUS_PAIRS = 3  # strongest correlations shown per group
#: Equations listed on a wide page, and remedy buttons per equation (a relation among 100
#: indicator columns would otherwise bring 100 buttons; every remedy is also previewed).
LISTED_EQUATIONS = 50
EQUATION_REMEDIES = 6

METHODS = ("pearson", "spearman")


def is_wide(diagnosis: dict[str, Any]) -> bool:
    return len(diagnosis.get("columns") or []) > WIDE_COLUMNS


# ---- results kept per diagnosis ---------------------------------------------------------
# A page of a table, a block's heatmap and the lead section all read the same diagnosis
# (the Analyst keeps it): what they derive is kept beside it, keyed by the object itself
# (held, so its id cannot be reused while the entry lives). Few owners: each is a whole
# diagnosis, which the Analyst's own cache holds anyway while it is recent.
_KEPT: OrderedDict[int, tuple[object, dict[str, object]]] = OrderedDict()
_KEPT_OWNERS = 6  # a diagnosis and its correlations are two owners
_LOCK = threading.Lock()


def kept(owner: object, what: str, make: Callable[[], T]) -> T:
    """make(), once per (owner object, what) while the owner is among the recent ones."""
    with _LOCK:
        hit = _KEPT.get(id(owner))
        if hit is not None and hit[0] is owner:
            _KEPT.move_to_end(id(owner))
            if what in hit[1]:
                return hit[1][what]  # type: ignore[return-value]
    value = make()
    with _LOCK:
        hit = _KEPT.get(id(owner))
        if hit is None or hit[0] is not owner:
            hit = (owner, {})
        hit[1][what] = value
        _KEPT[id(owner)] = hit
        _KEPT.move_to_end(id(owner))
        while len(_KEPT) > _KEPT_OWNERS:
            _KEPT.popitem(last=False)
    return value


# ---- groups and blocks ------------------------------------------------------------------
@dataclass(frozen=True)
class Structure:
    """The correlation structure of one matrix: names, the matrix, the groups of columns
    that move together (indices into names), the blocks of the display order, and for each
    pair of blocks its strongest correlation (R) and the two columns behind it (pairs)."""

    method: str
    names: list[str]
    matrix: np.ndarray
    groups: list[list[int]]
    parts: list[Block]
    R: np.ndarray
    pairs: list[list[Any]]
    order: tuple[int, ...] = ()

    def label(self, k: int) -> str:
        cols = self.parts[k].columns
        first = self.names[cols[0]]
        return first if len(cols) == 1 else f"{first} +{len(cols) - 1}"

    def parts_index(self) -> dict[int, int]:
        return {c: k for k, b in enumerate(self.parts) for c in b.columns}


def matrix(corr: dict[str, Any], method: str = "pearson") -> np.ndarray:
    """A correlations dict's `method` matrix as an array (the diagnosis holds nested lists),
    made once per dict."""
    rows = corr.get(method) or []

    def make() -> np.ndarray:
        n = len(rows)
        # From one flat run of numbers: a third faster than asarray on a list of lists.
        flat = np.fromiter(chain.from_iterable(rows), dtype=np.float64, count=n * n)
        return flat.reshape(n, n)

    return kept(corr, "array-" + method, make)


def _same(method: str, names: list[str], order: tuple[int, ...], C: np.ndarray
          ) -> Structure | None:
    """A structure kept for another diagnosis with exactly these correlations (a basis
    choice, a ridge penalty or an undo leaves them as they were), or None."""
    with _LOCK:
        held = [v.get("structure-" + method) for _, v in _KEPT.values()]
    for s in held:
        if isinstance(s, Structure) and s.names == names and s.order == order \
                and np.array_equal(s.matrix, C):
            return s
    return None


def structure(diagnosis: dict[str, Any], method: str = "pearson") -> Structure | None:
    """The structure of the diagnosis's `method` correlations (None when it has none)."""
    corr = diagnosis.get("correlations") or {}
    names = list(corr.get("columns") or [])
    if corr.get(method) is None or len(names) < 2:
        return None

    def make() -> Structure:
        C = matrix(corr, method)
        order = tuple(corr.get("order") or [])
        if sorted(order) != list(range(len(names))):
            order = tuple(range(len(names)))
        same = _same(method, names, order, C)
        if same is not None:
            return same
        groups = groups_together(C)
        parts = blocks(list(order), groups)
        R, pairs = block_extremes(C, parts)
        return Structure(method, names, C, groups, parts, R, pairs, order)

    return kept(corr, "structure-" + method, make)


def summary_figure(s: Structure) -> dict[str, Any]:
    """The block-by-block heatmap of a structure."""
    labels = [s.label(k) for k in range(len(s.parts))]
    z: list[list[float | None]] = []
    hover: list[list[str]] = []
    for a in range(len(s.parts)):
        zr, hr = [], []
        for b in range(len(s.parts)):
            v = s.R[a, b]
            pair = s.pairs[a][b]
            if pair is None or not np.isfinite(v):
                zr.append(None)
                hr.append(f"block {a + 1}: one column")
                continue
            zr.append(float(v))
            i, j = pair
            where = f"block {a + 1}" if a == b else f"blocks {a + 1} × {b + 1}"
            hr.append(f"{where}: strongest r = {v:.3f}, {s.names[i]} with {s.names[j]}")
        z.append(zr)
        hover.append(hr)
    name = "Pearson" if s.method == "pearson" else "Spearman (rank)"
    return block_summary_heatmap(
        labels, z, hover,
        f"{name} correlations by block: the strongest pair between two blocks "
        f"({len(s.names):,} columns in {len(s.parts)} blocks)")


def block_figure(s: Structure, k: int) -> dict[str, Any]:
    """One block's own heatmap, with the names of its columns."""
    cols = s.parts[k].columns
    sub = s.matrix[np.ix_(cols, cols)]
    return block_heatmap([s.names[c] for c in cols], sub.tolist(),
                         f"Block {k + 1}: {len(cols)} columns")


def block_choices(s: Structure) -> list[dict[str, Any]]:
    """Each block as the page's chooser lists it: number, label, size, whether a group."""
    return [{"number": k + 1, "label": s.label(k), "size": len(b.columns), "group": b.group}
            for k, b in enumerate(s.parts)]


# ---- the columns that matter ------------------------------------------------------------
def _in_relations(diagnosis: dict[str, Any]) -> list[str]:
    """The columns of the equations: first each left-hand side (the columns that add
    nothing), then the others in the order the equations name them."""
    deps = diagnosis.get("dependencies") or []
    cols: dict[str, None] = dict.fromkeys(dep["column"] for dep in deps)
    for dep in deps:
        cols.update(dict.fromkeys(dep.get("combination") or {}))
    return list(cols)


def _near(diagnosis: dict[str, Any]) -> list[dict[str, Any]]:
    near = [n for n in diagnosis.get("near_dependencies") or [] if not n.get("exact")]
    near.sort(key=lambda n: -(n["index"] if n["index"] is not None else np.inf))
    out = []
    for n in near[:FOCUS_NEAR]:
        ranked = sorted(n["proportions"].items(), key=lambda kv: -kv[1])
        out.append({"index": n["index"], "columns": ranked[:FOCUS_NAMES],
                    "more": max(len(ranked) - FOCUS_NAMES, 0)})
    return out


def _largest_vifs(diagnosis: dict[str, Any]) -> list[dict[str, Any]]:
    finite = [(c, v) for c, v in (diagnosis.get("vif") or {}).items() if v is not None]
    finite.sort(key=lambda cv: -cv[1])
    return [{"column": c, "vif": v, "marked": v > VIF_MARK} for c, v in finite[:FOCUS_VIF]]


def _groups(s: Structure | None) -> list[dict[str, Any]]:
    if s is None:
        return []
    out = []
    where = s.parts_index()
    for g in s.groups[:FOCUS_GROUPS]:
        names = [s.names[c] for c in sorted(g, key=lambda c: where.get(c, 0))]
        out.append({
            "size": len(g),
            "names": names[:FOCUS_NAMES],
            "more": max(len(names) - FOCUS_NAMES, 0),
            "pairs": [(s.names[i], s.names[j], r)
                      for i, j, r in strongest(s.matrix, g, FOCUS_PAIRS)],
            "block": where.get(g[0], 0) + 1,
        })
    return out


def focus(diagnosis: dict[str, Any]) -> dict[str, Any]:
    """The lead section of a wide page: columns in equations, flagged near-dependencies with
    their high proportions, the largest finite VIFs, and the groups that move together."""
    s = structure(diagnosis)
    relations = _in_relations(diagnosis)
    infinite = sum(v is None for v in (diagnosis.get("vif") or {}).values())
    return {
        "columns": len(diagnosis.get("columns") or []),
        "relations": relations[:FOCUS_NAMES * 2],
        "relations_more": max(len(relations) - FOCUS_NAMES * 2, 0),
        "relation_count": len(relations),
        "equations": len(diagnosis.get("dependencies") or []),
        "near": _near(diagnosis),
        "near_count": sum(not n.get("exact") for n in diagnosis.get("near_dependencies") or []),
        "vif": _largest_vifs(diagnosis),
        "infinite": infinite,
        "marked": sum(v is not None and v > VIF_MARK
                      for v in (diagnosis.get("vif") or {}).values()),
        "groups": _groups(s),
        "group_count": len(s.groups) if s else 0,
        "blocks": block_choices(s) if s else [],
    }
