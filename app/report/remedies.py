"""The remedies a design offers, each previewed before it is applied.

Builds the candidate changes (in recipe words, with the matching linear change for the
core) from one diagnosis and the design's recipe; the numbers come from rankscope.core.preview.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

import numpy as np

from rankscope.core.diagnosis import Diagnosis
from rankscope.core.factor import Factorization
from rankscope.core.preview import Change, previews, summarize
from rankscope.core.workspace import CONSTANT

#: At most this many candidates are offered (equations first, then flagged dimensions,
#: then centring).
MOST = 40
#: Each preview is one analysis of the changed (p, p) factor, O(p³) flops: previews stop when
#: their summed p³ would pass that of MOST previews at PREVIEW_COLUMNS columns (a budget of
#: about two seconds on a 2-core machine; measured: 40 previews at 250 columns in 1.5-2.5 s),
#: and the rest are listed without a preview. At 1,000 columns one preview takes about a
#: second, so 40 would keep `check` and the page's remedies waiting a minute.
PREVIEW_COLUMNS = 250
#: However wide the design, the first candidates (an equation's own columns) are previewed.
FEWEST = 3
#: Significant digits the ranking compares: the paths agree to about 1e-12 relative
#: (tests/cli/test_check_stream.py), far inside 8 digits.
SIGNIFICANT = 8
#: A column is "far from zero with little spread" when |mean| exceeds this many standard
#: deviations: it is then nearly collinear with the constant (common practice; the
#: non-essential ill-conditioning of Marquardt, JASA 75, 1980, and Belsley, The American
#: Statistician 38, 1984).
FAR_FROM_ZERO = 10.0


@dataclass(frozen=True)
class Candidate:
    """One remedy: what a person reads, what the app applies, and the change to preview.

    kind: drop | keep | reference | combine | center. steps: recipe steps to append (empty
    for keep). keep: the basis priority to set (keep kind only).
    """

    kind: str
    label: str
    steps: tuple[dict[str, Any], ...]
    change: Change
    keep: tuple[str, ...] | None = None
    about: str = ""


def _drop(column: str, d: Diagnosis, groups: dict[str, list[str]],
          references: dict[str, str], predictors: set[str]) -> Candidate | None:
    """Leave one design column out, in the recipe's words (intercept, level, or drop)."""
    if column == CONSTANT:
        return Candidate("drop", "Leave out the intercept",
                         ({"step": "intercept", "include": False},), Change(hide=(CONSTANT,)))
    group = next((g for g, cols in groups.items() if column in cols), None)
    if group is not None:
        level = column[len(group) + 1 : -1]
        old = references.get(group)
        step = ({"step": "indicators", "column": group, "reference": level},)
        label = f"Make {level} the reference level of {group}"
        if old is None:  # every level had a column: the new reference just loses its own
            return Candidate("reference", label, step, Change(hide=(column,)))
        if CONSTANT not in d.columns:
            return None
        # The old reference's indicator is the constant minus the other levels' columns.
        combo = {CONSTANT: 1.0} | {c: -1.0 for c in groups[group]}
        return Candidate("reference", label, step,
                         Change(hide=(column,), add=((f"{group}[{old}]", combo),)))
    if column in predictors:
        return Candidate("drop", f"Drop {column}", ({"step": "drop", "column": column},),
                         Change(hide=(column,)))
    return None


def candidates(d: Diagnosis, F: Factorization, *, groups: dict[str, list[str]],
               references: dict[str, str], predictors: set[str],
               steps: list[dict[str, Any]]) -> list[Candidate]:
    """Every remedy the views offer: for each exact dependency, drop or keep each of its
    columns; for each flagged near-dependency, drop one of its columns or combine two;
    centre the inputs of a product or square, and columns far from zero with little spread.

    predictors: design columns a drop step can take out. steps: the design's recipe.
    """
    out: list[Candidate] = []
    seen: set[tuple] = set()

    def add(c: Candidate | None) -> None:
        if c is None:
            return
        key = (c.kind, json.dumps(c.steps, sort_keys=True), c.keep)
        if key not in seen:
            seen.add(key)
            out.append(c)

    for dep in d.dependencies:
        members = [dep["column"], *dep["combination"]]
        for col in members:
            add(_drop(col, d, groups, references, predictors))
        for col in members[1:]:
            if col != CONSTANT:
                add(Candidate("keep", f"Keep {dep['column']} instead of {col}", (),
                              Change(keep=(dep["column"],)), keep=(dep["column"],)))
                break
    for near in d.near_dependencies:
        if near["exact"]:
            continue
        cols = near["columns"]
        for col in cols:
            add(_drop(col, d, groups, references, predictors))
        pair = [c for c in cols if c in predictors][:2]
        if len(pair) == 2:
            name = f"{pair[0]}+{pair[1]}"
            if name not in d.columns:
                add(Candidate(
                    "combine", f"Combine {pair[0]} and {pair[1]} into their sum",
                    ({"step": "combine", "columns": pair, "method": "sum", "name": name},),
                    Change(hide=tuple(pair), add=((name, {pair[0]: 1.0, pair[1]: 1.0}),))))
    for c in _centring(d, F, steps, predictors):
        add(c)
    return out[:MOST]


def _mean(F: Factorization, col: str) -> float:
    return float(F.means[F.columns.index(col)])


def _centring(d: Diagnosis, F: Factorization, steps: list[dict[str, Any]],
              predictors: set[str]) -> list[Candidate]:
    """Centre the inputs of products and squares whose inputs are in the design, and
    columns far from zero with little spread. Each is a change of origin: with the
    constant in the design the fit is the same, only the parametrization moves."""
    if CONSTANT not in d.columns:
        return []
    cols = set(d.columns)
    out: list[Candidate] = []
    for s in steps:
        if s.get("step") == "product":
            a, b = s["columns"]
            name = s["name"]
        elif (s.get("step") == "power" and s.get("exponent") == 2 and s.get("keep")):
            a = b = s["column"]
            name = s.get("name") or f"{a}^2"
        else:
            continue
        if not {a, b, name} <= cols or not {a, b} <= predictors:
            continue
        ma, mb = _mean(F, a), _mean(F, b)
        ac, bc = f"{a} (centered)", f"{b} (centered)"
        new = f"{name} (centered)"
        # (a − ā)(b − b̄) = ab − b̄·a − ā·b + ā·b̄: a combination of held columns.
        prod = {name: 1.0, a: -mb, b: -ma, CONSTANT: ma * mb} if a != b else {
            name: 1.0, a: -2 * ma, CONSTANT: ma * ma}
        centre = [{"step": "center", "column": a}]
        adds: list[tuple[str, dict[str, float]]] = [(ac, {a: 1.0, CONSTANT: -ma})]
        if b != a:
            centre.append({"step": "center", "column": b})
            adds.append((bc, {b: 1.0, CONSTANT: -mb}))
        adds.append((new, prod))
        out.append(Candidate(
            "center", f"Center the inputs of {name}",
            (*centre, {"step": "product", "columns": [ac, bc if b != a else ac], "name": new},
             {"step": "drop", "column": name}),
            Change(hide=tuple(dict.fromkeys([a, b, name])), add=tuple(adds)),
            about=name))
    n = max(F.n, 2)
    for j, c in enumerate(F.columns):
        if c not in predictors or j in F.constant_columns:
            continue
        sd = float(np.linalg.norm(F.centered[:, j]) / np.sqrt(n - 1))
        m = _mean(F, c)
        if sd > 0 and abs(m) > FAR_FROM_ZERO * sd:
            out.append(Candidate(
                "center", f"Center {c}", ({"step": "center", "column": c},),
                Change(hide=(c,), add=((f"{c} (centered)", {c: 1.0, CONSTANT: -m}),)),
                about=c))
    return out


def previews_allowed(p: int) -> int:
    """How many candidates a design of p columns previews (see PREVIEW_COLUMNS)."""
    fit = (MOST * PREVIEW_COLUMNS**3) // max(p, 1) ** 3
    return max(FEWEST, min(MOST, fit))


def listed(c: Candidate) -> dict:
    """A candidate in the contract's words, without its preview."""
    return {"kind": c.kind, "label": c.label, "steps": [dict(s) for s in c.steps],
            "keep": None if c.keep is None else list(c.keep)}


def previewed(d: Diagnosis, F: Factorization, cands: list[Candidate], *,
              keep: list[str] | None = None, tol: float | None = None) -> list[dict]:
    """Each candidate with its preview, ranked: fewest exact dependencies left first, then
    fewest infinite VIFs, then the largest finite VIF, then the condition number of the
    unit-length columns (the JSON contract's `remedies`)."""
    now = summarize(d, None)
    rows = []
    for c, p in zip(cands, previews(F, [c.change for c in cands], d, keep=keep, tol=tol),
                    strict=True):
        row = {**listed(c), **p.to_dict()}
        if c.kind == "center":
            row["centering"] = _centering_verdict(now.condition_number, p.condition_number,
                                                  d, p.largest_vif)
        rows.append(row)

    def key(r: dict) -> tuple:
        top = r["largest_finite_vif"]
        cond = r["condition_number"]["equilibrated"]
        # VIFs equal in exact arithmetic (the same column's, after different remedies) differ
        # in their last digits between the in-memory and streamed factors: compared to
        # SIGNIFICANT digits, such a tie falls to the condition number on every path.
        vif = 0.0 if top is None else float(f"{top['vif']:.{SIGNIFICANT}g}")
        return (r["columns"] - r["rank"], len(r["infinite_vif"]), vif,
                np.inf if cond is None else float(f"{cond:.{SIGNIFICANT}g}"))

    rows.sort(key=key)
    return rows


def _centering_verdict(before: dict, after: dict, d: Diagnosis,
                       top_after: tuple[str, float | None] | None) -> str:
    """What centring does, read off the numbers: it cures ill-conditioning that comes from
    distance to the origin (non-essential), never a dependency between the variables
    themselves (essential) (Marquardt, JASA 75, 1980; Snee & Marquardt, The American
    Statistician 38, 1984)."""
    def show(x: float | None) -> str:
        return "∞" if x is None else f"{x:.3g}"

    eq_b, eq_a = before["equilibrated"], after["equilibrated"]
    vifs = [v for v in d.vif.values() if v is not None]
    top_b = max(vifs) if vifs else None
    top_a = None if top_after is None else top_after[1]
    cured = (eq_b is None or (eq_a is not None and eq_a < eq_b / 10)) or (
        top_b is not None and top_a is not None and top_a < top_b / 2)
    if cured:
        return (f"helps: the ill-conditioning came from distance to zero (condition number "
                f"of the unit-length columns {show(eq_b)} → {show(eq_a)}, largest VIF "
                f"{show(top_b)} → {show(top_a)}); the fit is unchanged")
    return (f"cannot help: the columns are tangled among themselves, not with the origin "
            f"(largest VIF {show(top_b)} → {show(top_a)}, centered condition number "
            f"{show(before['centered'])} → {show(after['centered'])})")


def categorical_groups(groups: dict[str, list[str]], references: dict[str, str]
                       ) -> dict[str, list[str]]:
    """The groups that are a categorical's indicator columns as the recipe codes them
    (name[level]), which an indicators step can recode; a formula's terms are groups for
    GVIF only (their columns are dropped like any other)."""
    def coded(g: str, cols: list[str]) -> bool:
        return g in references or (len(cols) > 1 and all(
            c.startswith(f"{g}[") and c.endswith("]") and not c.startswith(f"{g}[T.")
            for c in cols))

    return {g: cols for g, cols in groups.items() if coded(g, cols)}


@dataclass(frozen=True)
class Remedies:
    """The remedies of a design: `shown`, previewed and ranked (the contract's `remedies`),
    and `unpreviewed`, the candidates past the preview budget in the order they were found
    (`remedies_not_previewed`: kind, label, steps, keep)."""

    shown: list[dict]
    unpreviewed: list[dict]

    def into(self, doc: dict) -> dict:
        """doc with both lists set (the JSON contract's fields)."""
        doc["remedies"] = self.shown
        doc["remedies_not_previewed"] = self.unpreviewed
        return doc


def remedies_of(d: Diagnosis, F: Factorization, design: Any, steps: list[dict[str, Any]],
                keep: list[str] | None, tol: float | None) -> Remedies:
    """The remedies of a design built by a recipe (rankscope.design.Design): as many
    previewed as the design's width allows (previews_allowed), the rest listed."""
    coded = categorical_groups(design.groups, design.references)
    indicator = {c for cols in coded.values() for c in cols}
    predictors = {c for c in design.columns if c not in indicator and c != CONSTANT}
    cands = candidates(d, F, groups=coded, references=design.references,
                       predictors=predictors, steps=steps)
    k = previews_allowed(F.p)
    return Remedies(previewed(d, F, cands[:k], keep=keep, tol=tol),
                    [listed(c) for c in cands[k:]])
