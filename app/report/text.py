"""The terminal report: a Diagnosis (as its dict) and its Design written as plain text.

Formats finished results only; every number is read from the Diagnosis, none computed here.
"""

from __future__ import annotations

import math
import re
import textwrap

import numpy as np

from rankscope.design.design import Design
from rankscope.report.cautions import VIF_MARK, choose_cautions

WIDTH = 100
#: What a terminal would act on instead of showing: C0 and C1 controls but the line feed
#: (ECMA-48: ESC starts colour, cursor and title sequences) and the bidirectional overrides
#: and isolates that can make text read in another order (Unicode TR 9; CVE-2021-42574).
UNSHOWN = re.compile("[\x00-\x09\x0b-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")
INF = "∞"
NONE = "—"


def num(x: float | None, digits: int = 4, missing: str = NONE) -> str:
    """A number in `digits` significant figures, plain notation where it stays short."""
    if x is None:
        return missing
    if not math.isfinite(x):
        return INF if x > 0 else "-" + INF
    if x == 0:
        return "0"
    if 1e-4 <= abs(x) < 10 ** max(digits + 2, 7):
        s = f"{x:.{digits}g}"
        if "e" in s:  # large integers: write them out
            s = f"{x:.0f}"
        return s
    return f"{x:.{max(digits - 2, 1)}e}"


def p_value(p: float | None) -> str:
    if p is None:
        return NONE
    if p == 0:
        return "<1e-300"  # below the smallest positive double: shown as a bound
    return f"{p:.2g}" if p >= 1e-4 else f"{p:.1e}"


def inert(text: str) -> str:
    """text with every character a terminal would act on written as its escape (\\x1b)."""
    return UNSHOWN.sub(lambda m: ascii(m.group())[1:-1], text)


def plural(n: int, word: str) -> str:
    return f"{n} {word}{'' if n == 1 else 's'}"


def heading(title: str) -> list[str]:
    return ["", title, "─" * min(len(title), WIDTH)]


def wrap(text: str, indent: str = "  ", later: str | None = None) -> list[str]:
    return textwrap.wrap(text, WIDTH, initial_indent=indent,
                         subsequent_indent=indent if later is None else later) or [indent]


def table(rows: list[list[str]], right: set[int], indent: str = "  ") -> list[str]:
    """Rows of cells in aligned columns; columns in `right` are right-aligned."""
    widths = [max(len(r[i]) for r in rows if i < len(r)) for i in range(max(map(len, rows)))]
    out = []
    for r in rows:
        cells = [c.rjust(widths[i]) if i in right else c.ljust(widths[i]) for i, c in enumerate(r)]
        out.append((indent + "  ".join(cells)).rstrip())
    return out


def _header(d: dict, design: Design, source: str | None, notes: list[str]) -> list[str]:
    lines = [f"rankscope check: {source}" if source else "rankscope check"]
    cols = d["columns"]
    resp = d.get("response") or design.response
    what = f"response {resp}" if resp else "no response (design columns only, no fit)"
    lines.append(f"  {len(cols)} design columns, {what}.")
    total, used = design.rows_total, design.rows_used
    rows = f"  Rows: {used} of {total} used"
    if total > used and design.dropped_by:
        parts = ", ".join(f"{c} {k}" for c, k in design.dropped_by.items())
        rows += f"; {total - used} deleted for a missing value ({parts})"
    lines.append(rows + ".")
    for note in [*notes, *design.notes, *d.get("notes", [])]:
        if note.startswith("Deleted "):
            continue  # already said on the rows line
        lines += wrap(note, "  · ", "    ")
    return lines


def _dependencies(d: dict) -> list[str]:
    deps = d["dependencies"]
    if not deps:
        return heading("Exact linear dependencies: none") + wrap(
            f"No column is a linear combination of the others at rank tolerance "
            f"{num(d['rank_tolerance'], 3)}.")
    lines = heading(f"Exact linear dependencies: {len(deps)}")
    lines += wrap("Each equation holds in every row used (up to the residual shown, a fraction "
                  "of the column's length). The column on the left has no estimate of its own "
                  "in the fit below.")
    for i, dep in enumerate(deps, start=1):
        lines.append(f"  {i}. {dep['equation']}")
        res = f"residual {num(dep['residual'], 2)} (factor)"
        if dep.get("residual_rows") is not None:
            res += f", {num(dep['residual_rows'], 2)} (rows)"
        lines.append(f"       {res}")
    return lines


def _rank(d: dict) -> list[str]:
    p = len(d["columns"])
    lines = heading("Rank and conditioning")
    state = "full column rank" if d["full_rank"] else f"deficient by {p - d['rank']}"
    lines.append(f"  Rank {d['rank']} of {p} columns ({state}); SVD {d['rank_svd']}, "
                 f"QR basis {d['rank_qr']}.")
    lines += wrap(f"Rank tolerance {num(d['rank_tolerance'], 3)} on the singular values of the "
                  f"unit-length columns; rule: {d['tolerance_rule']}.")
    if d.get("rank_note"):
        lines += wrap(d["rank_note"])
    cn = d["condition_number"]
    lines.append("  Condition numbers (σ_max/σ_min; ∞ when rank deficient):")
    lines += table([
        ["raw columns", num(cn["raw"], 4, INF)],
        ["unit-length columns", num(cn["equilibrated"], 4, INF)],
        ["centered, unit-length (constant left out)", num(cn["centered"], 4, INF)],
    ], {1}, "    ")
    return lines


def flagged_dimensions(d: dict) -> set[int]:
    """Rows of the index table that the core flagged: its near_dependencies carry the
    row's index and shares, copied from the same numbers, so equality finds the row."""
    out = set()
    for f in d["near_dependencies"]:
        for k, (ix, props) in enumerate(zip(d["condition_indices"], d["variance_proportions"],
                                            strict=True)):
            if props is None:  # a wide design's dimension of low index: never flagged
                continue
            if ix == f["index"] and all(props[c] == v for c, v in f["proportions"].items()):
                out.add(k)
    return out


#: Above this many design columns the index table shows only the dimensions that matter.
WIDE_COLUMNS = 50


def dimensions_shown(d: dict, most: int) -> tuple[list[int], list[int], dict[int, int]]:
    """The index table's dimensions, most ill-conditioned first; those a report shows (all
    of them up to WIDE_COLUMNS design columns, else the `most` most ill-conditioned and the
    flagged ones: the full table is p² cells, a million at 1,000 columns, none read; never
    one whose proportions were not computed, see docs/json.md); and each dimension's place
    in the order (1 = the most ill-conditioned)."""
    idx = d["condition_indices"]
    props = d["variance_proportions"]
    order = sorted(range(len(idx)), key=lambda k: -(idx[k] if idx[k] is not None else math.inf))
    rank_of = {k: i + 1 for i, k in enumerate(order)}
    if len(d["columns"]) <= WIDE_COLUMNS and all(row is not None for row in props):
        return order, order, rank_of
    flagged = flagged_dimensions(d)
    return order, [k for k in order if props[k] is not None
                   and (rank_of[k] <= most or k in flagged)], rank_of


def _index_table(d: dict) -> list[str]:
    names = d["columns"]
    idx = d["condition_indices"]
    props = d["variance_proportions"]
    exact = d["index_exact"]
    th = d["thresholds"]
    flagged = flagged_dimensions(d)
    lines = heading("Condition indices and variance-decomposition proportions")
    lines += wrap(
        "One column per dimension of the unit-length design, most ill-conditioned first. "
        "Reading down a column: the share of each coefficient's variance tied to that "
        "dimension (each row sums to 1 across dimensions). '*' marks a share above "
        f"{num(th['proportion'])} in a dimension whose index exceeds "
        f"{num(th['condition_index'])} with at least two such shares (common practice); "
        "'exact' is a dimension at the rank tolerance.")
    name_w = max(len(n) for n in names + ["condition index"])
    per = max(1, (WIDTH - name_w - 4) // 8)
    order, shown, rank_of = dimensions_shown(d, per)
    if not shown and order:
        top = max((x for x in idx if x is not None), default=None)
        return lines + wrap(
            f"No dimension of the {len(order)} reaches a condition index of 10 (the largest "
            f"is {num(top, 3, INF)}): no near-dependency to show. Every proportion is in the "
            "JSON output with --json --with proportions.")
    if len(shown) < len(order):
        lines += wrap(f"{len(shown)} of the {len(order)} dimensions shown: the most "
                      "ill-conditioned and the flagged ones (the JSON output, --json "
                      "--with proportions, has them all).")
    for start in range(0, len(shown), per):
        chunk = shown[start:start + per]
        head = ["dimension"] + [f"#{rank_of[k]}" + ("!" if k in flagged else "")
                                for k in chunk]
        ix = ["condition index"] + ["exact" if exact[k] else num(idx[k], 3, INF) for k in chunk]
        rows = [head, ix]
        for name in names:
            row = [name]
            for k in chunk:
                v = props[k][name]
                cell = f"{v:.2f}"
                if k in flagged and v > th["proportion"]:
                    cell += "*"
                row.append(cell)
            rows.append(row)
        lines.append("")
        lines += table(rows, set(range(1, len(chunk) + 1)))
    if d["near_dependencies"]:
        lines.append("")
        lines.append("  Flagged near-dependencies ('!' above):")
        for f in d["near_dependencies"]:
            parts = ", ".join(f"{c} {v:.2f}" for c, v in f["proportions"].items())
            kind = "exact" if f["exact"] else f"index {num(f['index'], 3, INF)}"
            lines += wrap(f"{kind}: {parts}", "    · ", "      ")
    return lines


def _vif(d: dict) -> list[str]:
    vif = d["vif"]
    if not vif:
        return []
    how = ("centered (the model holds a constant)" if d["vif_centered"]
           else "uncentered (no constant in the model)")
    lines = heading(f"Variance inflation, {how}")
    rows = [["column", "VIF", "tolerance", "SE ×", ""]]
    se = d.get("se_inflation") or {}
    for c, v in vif.items():
        note = ""
        if v is None:
            note = "in an exact dependency"
        elif v > VIF_MARK:
            note = f"above {VIF_MARK:g}"
        rows.append([c, num(v, 4, INF), num(d["tolerance"].get(c), 3),
                     num(se.get(c), 3, INF), note])
    lines += table(rows, {1, 2, 3})
    lines += wrap(f"VIF = 1/(1 − R²) of the column on the others; ∞ for a column in an exact "
                  f"dependency; the mark at {VIF_MARK:g} is common practice. SE × = √VIF: the "
                  "standard error is that many times what uncorrelated columns would give.")
    for c, why in (d.get("vif_absent") or {}).items():
        lines += wrap(f"No VIF for {c}: {why}.")
    gv = d.get("gvif") or {}
    if gv:
        lines.append("")
        lines.append("  Generalized VIF of column groups:")
        rows = [["group", "df", "GVIF", "per-df scale", ""]]
        for g, info in gv.items():
            undefined = info["gvif"] is None
            members_inf = any(vif.get(c, 0.0) is None for c in info["columns"])
            note = "a member is in an exact dependency" if undefined and members_inf else (
                "not defined without a constant" if undefined else "")
            rows.append([g, str(info["df"]), num(info["gvif"], 4, INF if members_inf else NONE),
                         num(info["gvif_scaled"], 4, INF if members_inf else NONE), note])
        lines += table(rows, {1, 2, 3}, "    ")
        lines += wrap("per-df scale = GVIF^(1/(2·df)), comparable with √VIF across groups of "
                      "different sizes (Fox & Monette, JASA 1992).", "    ")
    return lines


def _fit(d: dict) -> list[str]:
    fit = d.get("fit")
    if not fit:
        return []
    resp = d.get("response") or "the response"
    k = fit["n"] - fit["df_residual"]
    lines = heading(f"Least-squares fit of {resp}")
    lines.append(f"  {plural(fit['n'], 'row')}, {plural(k, 'estimated coefficient')}, "
                 f"{plural(fit['df_residual'], 'residual degree')} of freedom"
                 f"{'; weighted' if fit['weighted'] else ''}.")
    rows = [["column", "estimate", "std error", "t", "p"]]
    aliased = set(fit["aliased"])
    for c in d["columns"]:
        if c in aliased:
            rows.append([c, "aliased", NONE, NONE, NONE])
            continue
        rows.append([c, num(fit["coefficients"][c], 6), num(fit["std_errors"][c], 4),
                     num(fit["t_values"][c], 4), p_value(fit["p_values"][c])])
    lines += table(rows, {1, 2, 3, 4})
    lines.append("")
    lines.append(f"  Residual SD {num(fit['residual_std'], 5)} on {fit['df_residual']} df.")
    kind = "centered" if fit["r_squared_centered"] else "uncentered: no constant"
    lines.append(f"  R² {num(fit['r_squared'], 5)} ({kind}), adjusted "
                 f"{num(fit['adj_r_squared'], 5)}.")
    if fit["f_statistic"] is not None:
        lines.append(f"  F {num(fit['f_statistic'], 5)} on {fit['df_model']} and "
                     f"{fit['df_residual']} df, p {p_value(fit['f_p_value'])}.")
    if fit["alias_structure"]:
        lines.append("")
        lines += wrap("Under aliasing each basis estimate is unbiased for a combination of "
                      "true coefficients, not for its own one:")
        for a in fit["alias_structure"]:
            lines += wrap(f"{a['column']} estimates {a['text']}", "    · ", "      ")
    return lines


def _cautions(d: dict) -> list[str]:
    cs = choose_cautions(d)
    if not cs:
        return []
    lines = heading("Before acting on these numbers")
    for c in cs:
        lines += wrap(f"{c.title}. {c.text}", "  · ", "    ")
    return lines


#: Remedies listed in the terminal report (the JSON has them all).
REMEDIES_SHOWN = 8


def _remedies(d: dict) -> list[str]:
    rows_in = d.get("remedies") or []
    if not rows_in:
        return []
    lines = heading("Remedies, previewed")
    lines += wrap("Each change evaluated on the factor without applying it: the rank after, "
                  "the largest finite VIF, the condition number of the unit-length columns "
                  "and the largest change of a standard error. Best first.")
    rows = [["change", "rank", "largest VIF", "cond", "SE change", ""]]
    for r in rows_in[:REMEDIES_SHOWN]:
        top = r["largest_finite_vif"]
        vif = "—" if top is None else f"{num(top['vif'], 3)} ({top['column']})"
        if r["infinite_vif"]:
            vif = f"∞ ({len(r['infinite_vif'])} columns)"
        se = r.get("se_ratio") or {}
        far = max(se.items(), key=lambda kv: abs(np.log(kv[1])) if kv[1] > 0 else 0.0,
                  default=None)
        se_text = "—" if far is None else (
            "no change" if abs(np.log(far[1])) < 1e-9 else f"×{far[1]:.3g} {far[0]}")
        rows.append([r["label"], f"{r['rank']}/{r['columns']}", vif,
                     num(r["condition_number"]["equilibrated"], 3, INF), se_text, ""])
    lines += table(rows, {1, 3})
    for r in rows_in[:REMEDIES_SHOWN]:
        if r.get("centering"):
            lines += wrap(f"{r['label']}: {r['centering']}.", "  · ", "    ")
    if len(rows_in) > REMEDIES_SHOWN:
        lines += wrap(f"{len(rows_in) - REMEDIES_SHOWN} more in the JSON output (--json).")
    rest = d.get("remedies_not_previewed") or []
    if rest:
        beyond = len(rest) - REMEDIES_SHOWN
        lines += wrap(f"{len(rest)} more not previewed (each preview is one analysis of all "
                      f"{len(d['columns']):,} columns): "
                      + "; ".join(r["label"] for r in rest[:REMEDIES_SHOWN])
                      + (f"; and {beyond} more in the JSON output" if beyond > 0 else "")
                      + ". Try one with --recipe, or in the app (Apply, then Undo).")
    lines += wrap("A drop changes what the other coefficients mean; prefer the change your "
                  "subject knowledge supports, not only the best numbers.")
    return lines


#: Rows listed per measure in the terminal report.
ROWS_SHOWN = 5


def _influence(d: dict) -> list[str]:
    inf = d.get("influence")
    if not inf:
        return []
    lines = heading("Rows behind the conditioning")
    lines += wrap("Each row left out in turn (exact, by a rank-one downdate of the factor): the "
                  "rows that move the measure most. Rows count from 1 among the rows used. "
                  "Leaving rows out is a diagnosis, not a remedy: a row is evidence to check, "
                  "not to delete.")
    parts = [("condition number of the basis design", inf["condition_number"]["full"],
              inf["condition_number"]["top"])]
    parts += [(f"near-dependency {', '.join(x['columns'])} (index {num(x['index'], 3)})",
               x["index"], x["top"]) for x in inf["dimensions"]]
    for title, full, top in parts:
        lines.append(f"  {title}: {num(full, 4)}")
        rows = [["row", "without it", "change"]]
        rows += [[str(t["row"] + 1), num(t["without"], 4, INF), f"{100 * t['change']:.2g}%"]
                 for t in top[:ROWS_SHOWN]]
        lines += table(rows, {0, 1, 2}, "    ")
    return lines


def render_text(
    diagnosis: dict, design: Design, *, source: str | None = None, notes: list[str] | None = None
) -> str:
    """The whole report: dependencies, rank and conditioning, the index table, VIF/GVIF,
    the fit and the cautions. diagnosis: Diagnosis.to_dict(); source: the file name;
    notes: what the reader said about the file (Table.notes)."""
    lines = _header(diagnosis, design, source, list(notes or []))
    lines += _dependencies(diagnosis)
    lines += _rank(diagnosis)
    lines += _index_table(diagnosis)
    lines += _vif(diagnosis)
    lines += _fit(diagnosis)
    lines += _remedies(diagnosis)
    lines += _influence(diagnosis)
    lines += _cautions(diagnosis)
    # Column names and notes come from the file: shown, never obeyed by the terminal.
    return inert("\n".join(lines)) + "\n"
