"""Speed benchmark: full diagnosis, all VIFs, edit-and-refit, blocked factorization, memory.

`python -m rankscope.benchmarks.core [--quick]` prints one table with each goal beside its
measurement; it asserts nothing and never hides a miss.
"""

from __future__ import annotations

import argparse
import gc
import os
import sys
from dataclasses import dataclass, replace

import numpy as np

from rankscope.core import diagnose, factorize
from rankscope.core.diagnosis import diagnose_factor
from rankscope.design.recipe import Recipe
from rankscope.scale.edits import EditEngine
from rankscope.scale.planted import PLANTED, planted, planted_table
from rankscope.scale.timing import (
    THREAD_VARIABLES,
    best_of,
    machine,
    peak_memory,
    regression_loop,
)

#: (rows, columns) of the generated matrices.
SIZES = {"full": [(200_000, 100), (1_000_000, 50)], "quick": [(4_000, 30), (20_000, 12)]}
#: Rows of the tables edited through the engine, and their columns.
EDIT_ROWS = {"full": [10_000, 200_000, 1_000_000], "quick": [2_000, 10_000, 40_000]}
EDIT_COLS = {"full": 100, "quick": 12}
#: Auxiliary regressions actually run per size; the loop time is scaled to all columns.
LOOP_COLUMNS = {"full": 5, "quick": 3}
REPEATS = {"full": 3, "quick": 2}
#: Linear edits timed through the engine, one per kind of change to the factor: a
#: reparametrization that leaves the correlations alone, a unit change, a column removed,
#: and two columns replaced by their sum. The flatness row uses the first.
EDITS = [
    {"step": "center", "column": "x3"},
    {"step": "multiply", "column": "x4", "by": 0.001, "name": "x4 (thousands)"},
    {"step": "drop", "column": "x5"},
    {"step": "combine", "columns": ["x6", "x7"], "method": "sum", "name": "x6+x7"},
]

# The goals (ratios); a measurement beyond its goal is printed as MISSED.
DIAG_VS_LSTSQ = 1.0
DIAG_VS_GRAM = 3.0
LOOP_VS_DIAG = 300.0
EDIT_VS_DIAG = 0.02
EDIT_FLAT = 2.0  # edit time at the most rows over edit time at the fewest
MEMORY = 2.0
PREVIEW_VS_DIAG = 1.0
INFLUENCE_VS_DIAG = 2.0
IMPORT_SECONDS = 0.3


@dataclass
class Row:
    what: str
    size: str
    measured: str
    goal: str
    verdict: str


def _ms(t: float) -> str:
    return f"{t * 1e3:,.1f} ms" if t < 10 else f"{t:,.1f} s"


def _at_most(x: float, goal: float) -> str:
    return "met" if x <= goal else "MISSED"


def _size(n: int, p: int) -> str:
    return f"{n:,} × {p}"


def diagnosis_rows(n: int, p: int, repeats: int, loop_cols: int) -> list[Row]:
    """Full diagnosis against lstsq and XᵀX, all VIFs against the regression loop, the
    blocked factorization against one LAPACK QR, and peak memory."""
    rows = _timed_rows(n, p, repeats, loop_cols)
    gc.collect()  # the matrix of the timings is gone before the child measures memory
    matrix, peak = peak_memory(n, p)
    rows.append(Row("peak memory of a diagnosis / matrix bytes", _size(n, p),
                    f"{peak / matrix:.2f}× ({peak / 2**20:,.0f} MiB, matrix "
                    f"{matrix / 2**20:,.0f} MiB)", f"≤ {MEMORY:g}×",
                    _at_most(peak / matrix, MEMORY)))
    return rows


def _timed_rows(n: int, p: int, repeats: int, loop_cols: int) -> list[Row]:
    X, y, cols = planted(n, p)
    size = _size(n, p)
    t_diag = best_of(lambda: diagnose(X, cols, y, rank_correlation=False), repeats)
    t_lstsq = best_of(lambda: np.linalg.lstsq(X, y, rcond=None), repeats)
    t_gram = best_of(lambda: X.T @ X, repeats)
    rows = [
        Row("full diagnosis / numpy lstsq", size,
            f"{t_diag / t_lstsq:.2f}× ({_ms(t_diag)} vs {_ms(t_lstsq)})",
            f"≤ {DIAG_VS_LSTSQ:g}×", _at_most(t_diag / t_lstsq, DIAG_VS_LSTSQ)),
        Row("full diagnosis / XᵀX product", size,
            f"{t_diag / t_gram:.1f}× ({_ms(t_diag)} vs {_ms(t_gram)})",
            f"≤ {DIAG_VS_GRAM:g}×", _at_most(t_diag / t_gram, DIAG_VS_GRAM)),
    ]
    # The loop: every column but the intercept needs one regression; a few are run.
    subset = [int(j) for j in np.linspace(1, p - 1, loop_cols)]
    loop_vifs, t_subset = regression_loop(X, subset)
    t_loop = t_subset * (p - 1) / len(subset)
    d = diagnose(X, cols, y, rank_correlation=False)
    agree = [abs(v - d.vif[cols[j]]) / d.vif[cols[j]] for j, v in zip(subset, loop_vifs,
                                                                     strict=True)
             if d.vif.get(cols[j]) is not None and np.isfinite(v)]
    rows.append(Row(
        "all VIFs: regression loop / full diagnosis", size,
        f"{t_loop / t_diag:,.0f}× (loop {_ms(t_loop)}: {len(subset)} of {p - 1} regressions "
        f"run and scaled; VIFs agree to {max(agree, default=0):.0e})",
        f"≥ {LOOP_VS_DIAG:g}×", "met" if t_loop / t_diag >= LOOP_VS_DIAG else "MISSED"))
    t_fac = best_of(lambda: factorize(X, cols, y), repeats)
    M = np.column_stack([np.ones(n), X, y])
    t_qr = best_of(lambda: np.linalg.qr(M, mode="r"), repeats)
    rows.append(Row("blocked factorization / one LAPACK QR", size,
                    f"{t_fac / t_qr:.2f}× ({_ms(t_fac)} vs {_ms(t_qr)})", "(none set)", "—"))
    # Where the diagnosis spends its time: the same diagnosis on a factor without rows
    # skips only the work on the rows (the fit's refinement and the relations' residuals).
    F = factorize(X, cols, y)
    t_rest = best_of(lambda: diagnose_factor(replace(F, X=None, y=None),
                                             rank_correlation=False), repeats)
    t_rows = max(t_diag - t_fac - t_rest, 0.0)
    rows.append(Row("full diagnosis, where the time goes", size,
                    f"factorization {_ms(t_fac)}, work on the rows after it (fit refinement, "
                    f"residuals) {_ms(t_rows)}, the rest {_ms(t_rest)}", "(breakdown)", "—"))
    return rows


def _edit_times(n: int, p: int, repeats: int) -> tuple[list[tuple[float, float, str]], float,
                                                       int]:
    """For each of EDITS: (edit-and-refit time, edit alone, path taken); then the full
    diagnosis time of the same design and its number of columns."""
    table = planted_table(n, p)
    engine, design = EditEngine.build_with_design(table, Recipe([
        {"step": "response", "column": "y"}]))
    t_full = best_of(lambda: diagnose(design.X, design.columns, design.y,
                                      response=design.response, groups=design.groups,
                                      rank_correlation=False), repeats)
    out = []
    for step in EDITS:
        path = engine.apply(step).path

        def edit_and_refit(step: dict = step) -> None:
            engine.apply(step).engine.diagnose(rank_correlation=False)

        t_apply = best_of(lambda step=step: engine.apply(step).engine.factorization(),
                          repeats + 2)
        out.append((best_of(edit_and_refit, repeats + 2), t_apply, path))
    return out, t_full, len(design.columns)


def _edit_name(step: dict) -> str:
    what = step.get("column") or "+".join(step.get("columns", []))
    return f"{step['step']} {what}"


def edit_rows(row_counts: list[int], p: int, repeats: int) -> list[Row]:
    """Edits and refits through the engine against a full diagnosis of the same design: every
    edit kind at the middle size, the first edit at every size for flatness."""
    rows: list[Row] = []
    first: list[float] = []
    middle = row_counts[len(row_counts) // 2]
    for n in row_counts:
        times, t_full, cols = _edit_times(n, p, repeats)
        gc.collect()
        first.append(times[0][0])
        shown = range(len(EDITS)) if n == middle else [0]
        for i in shown:
            t_edit, t_apply, path = times[i]
            rows.append(Row(f"edit and refit / full diagnosis: {_edit_name(EDITS[i])}",
                            _size(n, cols),
                            f"{t_edit / t_full:.2%} ({_ms(t_edit)}, of which the edit "
                            f"{_ms(t_apply)}, vs {_ms(t_full)}; path: {path})",
                            f"≤ {EDIT_VS_DIAG:.0%}", _at_most(t_edit / t_full, EDIT_VS_DIAG)))
    flat = first[-1] / first[0]
    rows.append(Row(f"edit and refit ({_edit_name(EDITS[0])}): most rows / fewest rows",
                    f"{row_counts[-1]:,} vs {row_counts[0]:,}", f"{flat:.2f}×",
                    f"≤ {EDIT_FLAT:g}× (flat)", _at_most(flat, EDIT_FLAT)))
    return rows


def import_rows(repeats: int) -> list[Row]:
    """`import rankscope` in a fresh interpreter, as Python's -X importtime counts it (the
    package line: its own imports, not the interpreter's start); best of `repeats`."""
    import subprocess

    times = []
    for _ in range(repeats):
        err = subprocess.run([sys.executable, "-X", "importtime", "-c", "import rankscope"],
                             capture_output=True, text=True, check=True).stderr
        line = next(ln for ln in err.splitlines() if ln.split("|")[-1].strip() == "rankscope")
        times.append(int(line.split("|")[1]) / 1e6)
    best = min(times)
    return [Row("import rankscope (fresh interpreter)", "—", _ms(best),
                f"≤ {IMPORT_SECONDS:g} s", _at_most(best, IMPORT_SECONDS))]


def remedy_rows(n: int, p: int, repeats: int) -> list[Row]:
    """The remedy previews (every candidate, on the factor) and the rows behind the
    conditioning (exact leave-one-out) against a full diagnosis of the same design."""
    from rankscope.core.factor import factorize as factor_of
    from rankscope.design.recipe import build_design
    from rankscope.report.remedies import remedies_of

    steps = [{"step": "response", "column": "y"}]
    design = build_design(planted_table(n, p), Recipe(steps))
    X, cols, y = design.X, design.columns, design.y
    t_full = best_of(lambda: diagnose(X, cols, y, response=design.response,
                                      rank_correlation=False), repeats)
    F = factor_of(X, cols, y)
    d = diagnose_factor(F, response=design.response, rank_correlation=False)
    found = remedies_of(d, F, design, steps, None, None).shown
    t_prev = best_of(lambda: remedies_of(d, F, design, steps, None, None), repeats)
    t_inf = best_of(lambda: diagnose_factor(F, response=design.response,
                                            rank_correlation=False, influence=True), repeats)
    t_plain = best_of(lambda: diagnose_factor(F, response=design.response,
                                              rank_correlation=False), repeats)
    t_loo = max(t_inf - t_plain, 0.0)
    size = _size(n, len(cols))
    return [
        Row("remedy previews (all) / full diagnosis", size,
            f"{t_prev / t_full:.2f}× ({len(found)} previews in {_ms(t_prev)} vs "
            f"{_ms(t_full)})", f"≤ {PREVIEW_VS_DIAG:g}×",
            _at_most(t_prev / t_full, PREVIEW_VS_DIAG)),
        Row("rows behind the conditioning (leave-one-out) / full diagnosis", size,
            f"{t_loo / t_full:.2f}× ({_ms(t_loo)} vs {_ms(t_full)})",
            f"≤ {INFLUENCE_VS_DIAG:g}×", _at_most(t_loo / t_full, INFLUENCE_VS_DIAG)),
    ]


def render(rows: list[Row]) -> str:
    head = Row("measurement", "size", "measured", "goal", "verdict")
    cells = [[r.what, r.size, r.measured, r.goal, r.verdict] for r in [head, *rows]]
    widths = [max(len(c[i]) for c in cells) for i in range(5)]
    lines = [" | ".join(c[i].ljust(widths[i]) for i in range(5)).rstrip() for c in cells]
    lines.insert(1, "-+-".join("-" * w for w in widths))
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> None:
    parser = argparse.ArgumentParser(prog="python -m rankscope.benchmarks.core",
                                     description=__doc__)
    parser.add_argument("--quick", action="store_true", help="small sizes, a smoke run")
    parser.add_argument("--threads", type=int, default=None,
                        help="BLAS threads (set before numpy loads, by restarting); "
                        "1 gives steadier numbers on a machine shared with other work")
    args = parser.parse_args(argv)
    if args.threads is not None and os.environ.get(THREAD_VARIABLES[0]) != str(args.threads):
        env = os.environ | {v: str(args.threads) for v in THREAD_VARIABLES}
        os.execve(sys.executable,
                  [sys.executable, "-m", "rankscope.benchmarks.core", *sys.argv[1:]], env)
    mode = "quick" if args.quick else "full"
    for line in machine():
        print(line)
    print(f"mode: {mode}; best of {REPEATS[mode]} (edits: {REPEATS[mode] + 2}); "
          f"planted: {PLANTED}; diagnosis without rank correlations")
    rows: list[Row] = []
    for n, p in SIZES[mode]:
        rows += diagnosis_rows(n, p, REPEATS[mode], LOOP_COLUMNS[mode])
    rows += edit_rows(EDIT_ROWS[mode], EDIT_COLS[mode], REPEATS[mode])
    n, p = SIZES[mode][0]
    rows += remedy_rows(n, p, REPEATS[mode])
    rows += import_rows(REPEATS[mode] + 2)
    print()
    print(render(rows))
    missed = [r for r in rows if r.verdict == "MISSED"]
    print()
    print(f"{len(missed)} goal(s) MISSED" if missed else "every goal met")


if __name__ == "__main__":
    main()
