"""The sections of the HTML report, each a piece of markup built from the diagnosis dict.

Formats finished results only; every number is read from the diagnosis, none computed here.
"""

from __future__ import annotations

from collections.abc import Sequence
from html import escape

from rankscope.report.cautions import VIF_MARK, choose_cautions
from rankscope.report.text import (
    INF,
    NONE,
    WIDE_COLUMNS,
    dimensions_shown,
    flagged_dimensions,
    num,
    p_value,
)


def esc(value: object) -> str:
    return escape(str(value), quote=True)


def table(head: Sequence[str], rows: Sequence[Sequence[str]], numeric: set[int],
          caption: str = "", marked: set[tuple[int, int]] | None = None) -> str:
    """An HTML table of already formatted cells (escaped here); numeric columns align right;
    marked holds (row, column) cells to highlight."""
    marked = marked or set()

    def cell(tag: str, i: int, j: int, text: str) -> str:
        cls = ["num"] if j in numeric else []
        if (i, j) in marked:
            cls.append("mark")
        attr = f' class="{" ".join(cls)}"' if cls else ""
        return f"<{tag}{attr}>{esc(text)}</{tag}>"

    out = ["<table>"]
    if caption:
        out.append(f"<caption>{esc(caption)}</caption>")
    out.append("<thead><tr>" + "".join(cell("th", -1, j, h) for j, h in enumerate(head))
               + "</tr></thead><tbody>")
    for i, row in enumerate(rows):
        out.append("<tr>" + "".join(cell("td", i, j, c) for j, c in enumerate(row)) + "</tr>")
    out.append("</tbody></table>")
    return "".join(out)


def section(key: str, title: str, *parts: str) -> str:
    return f'<section id="{key}"><h2>{esc(title)}</h2>{"".join(parts)}</section>'


def para(text: str) -> str:
    return f"<p>{esc(text)}</p>"


def chart(key: str) -> str:
    return f'<div class="chart" id="chart-{esc(key)}"></div>'


def dependencies(d: dict) -> str:
    deps = d["dependencies"]
    if not deps:
        return section("relations", "Exact dependencies: none", para(
            "No column is a linear combination of the others at rank tolerance "
            f"{num(d['rank_tolerance'], 3)}."))
    items = []
    for dep in deps:
        res = f"residual {num(dep['residual'], 2)} of the column's length"
        if dep.get("residual_rows") is not None:
            res += f" ({num(dep['residual_rows'], 2)} on the rows)"
        items.append(f'<li><code class="equation">{esc(dep["equation"])}</code>'
                     f'<span class="aside">{esc(res)}</span></li>')
    return section(
        "relations", f"Exact dependencies: {len(deps)}",
        para("Each equation holds in every row used. The column on its left has no estimate "
             "of its own in the fit: the data cannot tell it apart from the right-hand side."),
        '<ol class="equations">' + "".join(items) + "</ol>")


def conditioning(d: dict) -> str:
    p = len(d["columns"])
    state = "full column rank" if d["full_rank"] else f"short of full rank by {p - d['rank']}"
    cn = d["condition_number"]
    rows = [["as given", num(cn["raw"], 4, INF)],
            ["each column scaled to unit length", num(cn["equilibrated"], 4, INF)],
            ["centered and scaled, constant left out", num(cn["centered"], 4, INF)]]
    parts = [para(f"Rank {d['rank']} of {p} columns ({state}); SVD {d['rank_svd']}, "
                  f"QR basis {d['rank_qr']}. Tolerance {num(d['rank_tolerance'], 3)}: "
                  f"{d['tolerance_rule']}.")]
    if d.get("rank_note"):
        parts.append(para(d["rank_note"]))
    parts.append(table(["columns", "condition number (largest σ / smallest σ)"], rows, {1},
                       "∞ when the columns are exactly dependent"))
    parts.append(chart("spectrum"))
    return section("conditioning", "Rank and condition numbers", *parts)


#: Dimensions a wide design's report shows beyond the flagged ones (dimensions_shown).
WIDE_DIMENSIONS = 10


def index_table(d: dict) -> str:
    names, idx = d["columns"], d["condition_indices"]
    props, exact, th = d["variance_proportions"], d["index_exact"], d["thresholds"]
    order, shown, rank_of = dimensions_shown(d, WIDE_DIMENSIONS)
    if not shown and order:
        top = max((x for x in idx if x is not None), default=None)
        return section("indices", "Condition indices and variance shares", para(
            f"No dimension of the {len(order)} reaches a condition index of 10 (the largest is "
            f"{num(top, 3, INF)}): no near-dependency to show. Every share is in "
            "`rankscope check --json --with proportions`."))
    flagged = flagged_dimensions(d)
    head = ["", *[f"#{rank_of[k]}{' !' if k in flagged else ''}" for k in shown]]
    rows = [["condition index", *["exact" if exact[k] else num(idx[k], 3, INF) for k in shown]]]
    marked = set()
    for r, name in enumerate(names, start=1):
        rows.append([name, *[f"{props[k][name]:.2f}" for k in shown]])
        for j, k in enumerate(shown, start=1):
            if k in flagged and props[k][name] > th["proportion"]:
                marked.add((r, j))
    trimmed = [] if len(shown) == len(order) else [para(
        f"{len(shown)} of the {len(order)} dimensions shown (past {WIDE_COLUMNS} columns): "
        f"the {WIDE_DIMENSIONS} most ill-conditioned and the flagged ones. The app's table and "
        "`rankscope check --json --with proportions` have them all.")]
    return section(
        "indices", "Condition indices and variance shares",
        para("One column per dimension of the unit-length design, the worst conditioned "
             "first. Down a column: the share of each coefficient's variance tied to that "
             f"dimension. Highlighted: shares above {num(th['proportion'])} in a dimension "
             f"('!') whose index exceeds {num(th['condition_index'])} with at least two such "
             "shares (common practice, not a law)."),
        *trimmed,
        '<div class="wide">' + table(head, rows, set(range(1, len(shown) + 1)),
                                     marked=marked) + "</div>")


def inflation(d: dict) -> str:
    vif = d["vif"]
    if not vif:
        return ""
    rows = []
    se = d.get("se_inflation") or {}
    for c, v in vif.items():
        note = "in an exact dependency" if v is None else (
            f"above {VIF_MARK:g}" if v > VIF_MARK else "")
        rows.append([c, num(v, 4, INF), num(d["tolerance"].get(c), 3), num(se.get(c), 3, INF),
                     note])
    how = "centered" if d["vif_centered"] else "uncentered (the model has no constant)"
    parts = [table(["column", "VIF", "tolerance", "SE ×", ""], rows, {1, 2, 3}, f"VIF, {how}"),
             para(f"VIF = 1/(1 − R²) of the column regressed on the others; ∞ for a column in "
                  f"an exact dependency. The mark at {VIF_MARK:g} is common practice. SE × is "
                  "√VIF: the standard error is that many times what uncorrelated columns "
                  "would give."),
             *[para(f"No VIF for {c}: {why}.") for c, why in (d.get("vif_absent") or {}).items()],
             chart("inflation")]
    gv = d.get("gvif") or {}
    if gv:
        grows = [[g, str(i["df"]), num(i["gvif"], 4, NONE), num(i["gvif_scaled"], 4, NONE)]
                 for g, i in gv.items()]
        parts.append(table(["group", "df", "GVIF", "GVIF^(1/(2·df))"], grows, {1, 2, 3},
                           "Generalized VIF of indicator groups (Fox & Monette, JASA 1992)"))
    return section("inflation", "Variance inflation", *parts)


def fit(d: dict) -> str:
    f = d.get("fit")
    if not f:
        return section("fit", "Fit", para("No response is chosen, so there is no fit."))
    aliased = set(f["aliased"])
    rows = []
    for c in d["columns"]:
        if c in aliased:
            rows.append([c, "aliased", NONE, NONE, NONE])
        else:
            rows.append([c, num(f["coefficients"][c], 6), num(f["std_errors"][c], 4),
                         num(f["t_values"][c], 4), p_value(f["p_values"][c])])
    kind = "centered" if f["r_squared_centered"] else "uncentered: no constant"
    lines = [f"{f['n']} rows, {f['n'] - f['df_residual']} estimated coefficients, "
             f"{f['df_residual']} residual degrees of freedom"
             f"{'; weighted' if f['weighted'] else ''}.",
             f"Residual SD {num(f['residual_std'], 5)}; R² {num(f['r_squared'], 5)} ({kind}), "
             f"adjusted {num(f['adj_r_squared'], 5)}."]
    if f["f_statistic"] is not None:
        lines.append(f"F {num(f['f_statistic'], 5)} on {f['df_model']} and {f['df_residual']} "
                     f"df, p {p_value(f['f_p_value'])}.")
    parts = [table(["column", "estimate", "std error", "t", "p"], rows, {1, 2, 3, 4}),
             *map(para, lines)]
    if f["alias_structure"]:
        items = "".join(f"<li>{esc(a['column'])} estimates <code>{esc(a['text'])}</code></li>"
                        for a in f["alias_structure"])
        parts.append(para("With aliased columns each basis estimate stands for a combination "
                          "of true coefficients:") + f"<ul>{items}</ul>")
    return section("fit", f"Least-squares fit of {d.get('response') or 'the response'}", *parts)


def cautions(d: dict) -> str:
    found = choose_cautions(d)
    if not found:
        return ""
    items = "".join(f"<li><strong>{esc(c.title)}.</strong> {esc(c.text)}</li>" for c in found)
    return section("cautions", "Before acting on these numbers", f"<ul>{items}</ul>")


def listing(key: str, title: str, items: Sequence[str], ordered: bool = False) -> str:
    if not items:
        return ""
    tag = "ol" if ordered else "ul"
    body = "".join(f"<li>{esc(i)}</li>" for i in items)
    return section(key, title, f"<{tag}>{body}</{tag}>")
