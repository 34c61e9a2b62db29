"""Plotly figure builders: pure functions from a diagnosis dict to a figure dict (web, report).

No I/O and no plotly import; no numerics beyond ordering and scaling numbers for display.
"""

from __future__ import annotations

import math
from typing import Any

from rankscope.report.cautions import VIF_MARK

Figure = dict[str, Any]

# The rankscope palette (also in static/rankscope.css): ink, teal, brick, amber, paper.
INK = "#1d2b36"
TEAL = "#0f6b72"
TEAL_LIGHT = "#7fb7b9"
BRICK = "#a8432f"
AMBER = "#c98a1b"
PAPER = "#fbfaf6"
GRID = "#e4e0d6"

#: Diverging scale for correlations: brick for −1, paper for 0, teal for +1.
CORRELATION_SCALE = [[0.0, BRICK], [0.5, "#f4f1ea"], [1.0, TEAL]]

#: The VIF guide line: the same common-practice mark the cautions use, drawn as a guide only.
VIF_GUIDE = VIF_MARK


def plot_text(name: str) -> str:
    """A column name as Plotly label text that shows exactly as written. Plotly reads a
    subset of HTML in titles, tick labels, legends and hover text (<b>, <br>, <a href>, and
    entities), so "<", ">" and "&" become entities, which it turns back into the characters
    on screen (HTML 5 named character references)."""
    return name.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")


def _layout(title: str, **extra: Any) -> dict[str, Any]:
    base: dict[str, Any] = {
        "title": {"text": title, "x": 0.0, "xanchor": "left", "font": {"size": 15, "color": INK}},
        "paper_bgcolor": PAPER,
        "plot_bgcolor": PAPER,
        "font": {"family": "system-ui, -apple-system, 'Segoe UI', sans-serif", "color": INK,
                 "size": 12},
        "margin": {"l": 60, "r": 20, "t": 48, "b": 48},
    }
    base.update(extra)
    return base


def _axis(title: str, **extra: Any) -> dict[str, Any]:
    return {"title": {"text": title}, "gridcolor": GRID, "zerolinecolor": GRID, **extra}


def correlation_heatmap(diagnosis: dict, method: str = "pearson") -> Figure | None:
    """Correlation matrix (Pearson or Spearman) of the non-constant columns, in the
    clustered order of the diagnosis, so strongly related columns sit next to each other.

    None when the diagnosis has no such matrix (Spearman without rows, or < 2 columns).
    """
    corr = diagnosis.get("correlations") or {}
    matrix = corr.get(method)
    names = corr.get("columns") or []
    if matrix is None or len(names) < 2:
        return None
    order = corr.get("order") or list(range(len(names)))
    labels = [plot_text(names[i]) for i in order]
    z = [[matrix[i][j] for j in order] for i in order]
    label = "Pearson" if method == "pearson" else "Spearman (rank)"
    return _named_heatmap(labels, z, f"{label} correlations, related columns grouped")


def _correlation_trace(labels: list[str], z: list[list[Any]], text: list[list[str]],
                       hover: str, **extra: Any) -> dict[str, Any]:
    """A heatmap trace of correlations on the diverging scale from −1 to 1."""
    return {"type": "heatmap", "z": z, "x": labels, "y": labels, "zmin": -1.0, "zmax": 1.0,
            "colorscale": CORRELATION_SCALE, "text": text, "hovertemplate": hover,
            "colorbar": {"title": {"text": "r"}, "thickness": 12}, **extra}


def _named_heatmap(labels: list[str], z: list[list[float]], title: str) -> Figure:
    """A correlation heatmap with a name on every row and column (labels: plot_text)."""
    text = [[f"{v:.3f}" for v in row] for row in z]
    size = max(360, min(900, 140 + 22 * len(labels)))
    return {
        "data": [_correlation_trace(labels, z, text,
                                    "%{y} with %{x}: %{text}<extra></extra>")],
        "layout": _layout(
            title,
            height=size,
            xaxis={"tickangle": -45, "automargin": True, "side": "bottom"},
            yaxis={"autorange": "reversed", "automargin": True},
        ),
    }


def block_heatmap(names: list[str], z: list[list[float]], title: str) -> Figure:
    """The correlations of one block of columns, with their names (names: as written; made
    into label text here)."""
    return _named_heatmap([plot_text(n) for n in names], z, title)


def block_summary_heatmap(labels: list[str], z: list[list[float | None]],
                          hover: list[list[str]], title: str) -> Figure:
    """Blocks of columns against blocks: each cell the correlation of largest size between
    a column of one block and a column of the other (labels and hover: as written; made into
    label text here). Blocks are numbered on the axes, so a click names one block."""
    ticks = [f"{k + 1}. {plot_text(t)}" for k, t in enumerate(labels)]
    size = max(360, min(760, 160 + 17 * len(labels)))
    text = [[plot_text(h) for h in row] for row in hover]
    return {
        "data": [_correlation_trace(ticks, z, text, "%{text}<extra></extra>",
                                    hoverongaps=False, xgap=1, ygap=1)],
        "layout": _layout(
            title,
            height=size,
            xaxis={"tickangle": -45, "automargin": True, "side": "bottom",
                   "tickfont": {"size": 10}},
            yaxis={"autorange": "reversed", "automargin": True, "tickfont": {"size": 10}},
        ),
    }


def singular_value_spectrum(diagnosis: dict) -> Figure:
    """Singular values of the unit-length design on a log scale, with the rank tolerance.

    Values at zero cannot sit on a log axis: they are drawn at a floor below the
    tolerance and labelled as zero.
    """
    sv = list(diagnosis["singular_values"]["equilibrated"])
    tol = float(diagnosis["rank_tolerance"])
    positive = [s for s in sv if s > 0]
    floor = min([tol / 1e3] + [s / 10 for s in positive]) if (positive or tol > 0) else 1e-16
    floor = floor if floor > 0 else 1e-16
    shown = [s if s > 0 else floor for s in sv]
    above = [s > tol for s in sv]
    colors = [TEAL if a else BRICK for a in above]
    hover = [
        f"σ{k + 1} = {s:.4g}" + ("" if a else " (at or below the tolerance: exact dependency)")
        if s > 0 else f"σ{k + 1} = 0 (exact dependency)"
        for k, (s, a) in enumerate(zip(sv, above, strict=True))
    ]
    k = list(range(1, len(sv) + 1))
    return {
        "data": [
            {
                "type": "scatter",
                "mode": "lines+markers",
                "x": k,
                "y": shown,
                "marker": {"color": colors, "size": 9},
                "line": {"color": TEAL_LIGHT, "width": 1.5},
                "text": hover,
                "hovertemplate": "%{text}<extra></extra>",
                "name": "singular values",
            },
            {
                "type": "scatter",
                "mode": "lines",
                "x": [0.5, len(sv) + 0.5],
                "y": [tol, tol] if tol > 0 else [floor, floor],
                "line": {"color": BRICK, "dash": "dash", "width": 1.5},
                "name": f"rank tolerance {tol:.3g}",
                "hoverinfo": "name",
            },
        ],
        "layout": _layout(
            f"Singular values (columns scaled to unit length): rank {diagnosis['rank']} "
            f"of {len(sv)}",
            xaxis=_axis("position, largest first", dtick=1 if len(sv) <= 30 else None),
            yaxis=_axis("singular value", type="log", exponentformat="power"),
            legend={"orientation": "h", "y": -0.2},
            height=360,
        ),
    }


def inflation_bars(diagnosis: dict, limit: int | None = None) -> Figure | None:
    """VIF per column, largest first, log scale. Infinite VIFs (columns in an exact
    dependency) are drawn at the right edge in brick and labelled as infinite.

    limit: draw only the `limit` largest (a wide design); the title says how many of all.
    """
    vif = diagnosis.get("vif") or {}
    if not vif:
        return None
    finite = [v for v in vif.values() if v is not None]
    edge = max(finite + [VIF_GUIDE]) * 10
    ordered = sorted(vif.items(), key=lambda kv: -(math.inf if kv[1] is None else kv[1]))
    shown = "" if limit is None or limit >= len(ordered) else \
        f", the largest {limit} of {len(ordered):,}"
    ordered = ordered[:limit]
    names = [plot_text(c) for c, _ in ordered]
    values = [edge if v is None else v for _, v in ordered]
    colors = [BRICK if v is None else (AMBER if v >= VIF_GUIDE else TEAL) for _, v in ordered]
    text = ["∞" if v is None else f"{v:.3g}" for _, v in ordered]
    kind = "centered" if diagnosis.get("vif_centered") else "uncentered (no constant)"
    return {
        "data": [{
            "type": "bar",
            "orientation": "h",
            "x": values,
            "y": names,
            "marker": {"color": colors},
            "text": text,
            "textposition": "outside",
            "cliponaxis": False,
            "hovertemplate": "%{y}: VIF %{text}<extra></extra>",
        }],
        "layout": _layout(
            f"Variance inflation per column ({kind}{shown})",
            xaxis=_axis("VIF (log scale)", type="log", range=[0, math.log10(edge) + 0.4]),
            yaxis={"autorange": "reversed", "automargin": True},
            height=max(260, 70 + 24 * len(names)),
            shapes=[{
                "type": "line", "xref": "x", "yref": "paper", "x0": VIF_GUIDE, "x1": VIF_GUIDE,
                "y0": 0, "y1": 1, "line": {"color": AMBER, "dash": "dot", "width": 1},
            }],
            annotations=[{
                "x": math.log10(VIF_GUIDE), "xref": "x", "y": 1.0, "yref": "paper",
                "text": f"{VIF_GUIDE:g}: common guide", "showarrow": False, "yanchor": "bottom",
                "font": {"size": 10, "color": AMBER},
            }],
            showlegend=False,
        ),
    }


def influence_chart(influence: dict) -> Figure | None:
    """Relative change of each measure (the condition number, each flagged index) with each
    row left out, by row: the rows behind the conditioning stand out as spikes. Above the
    row limit only the listed rows are drawn."""
    series = [("condition number", influence["condition_number"])]
    series += [(f"index {d['index']:.3g}: " + ", ".join(d["columns"]), d)
               for d in influence["dimensions"]]
    colors = [INK, BRICK, AMBER, TEAL, TEAL_LIGHT]
    data = []
    for i, (name, m) in enumerate(series):
        full = m.get("full", m.get("index"))
        if m["without"] is not None and full:
            x = list(range(1, len(m["without"]) + 1))
            y = [abs(v - full) / full for v in m["without"]]
            mode = "lines"
        else:
            x = [t["row"] + 1 for t in m["top"]]
            y = [t["change"] for t in m["top"]]
            mode = "markers"
        data.append({"type": "scattergl" if len(x) > 2000 else "scatter", "mode": mode,
                     "x": x, "y": y, "name": plot_text(name),
                     "line": {"color": colors[i % len(colors)], "width": 1},
                     "marker": {"color": colors[i % len(colors)]},
                     "hovertemplate": "row %{x}: %{y:.3%}<extra>%{fullData.name}</extra>"})
    return {
        "data": data,
        "layout": _layout("With each row left out: relative change",
                          xaxis=_axis("row (among the rows used)"),
                          yaxis=_axis("relative change", tickformat=".1%", rangemode="tozero"),
                          height=320, legend={"orientation": "h", "y": -0.25}),
    }


def _scaled_path(path: list[float]) -> list[float]:
    big = max((abs(v) for v in path), default=0.0)
    return [v / big if big > 0 else 0.0 for v in path]


def ridge_trace(diagnosis: dict, limit: int | None = None) -> Figure | None:
    """Ridge coefficients along the penalty grid, each divided by its largest size on the
    path so columns of any unit share one axis; the chosen penalty is marked. limit: draw
    only that many columns, those whose scaled path moves most (a wide design's thousand
    lines would hide one another)."""
    ridge = diagnosis.get("ridge")
    if not ridge or not ridge.get("columns"):
        return None
    pens = list(ridge["penalties"])
    # λ = 0 has no place on a log axis: it is shown at a tenth of the smallest positive λ.
    positive = [x for x in pens if x > 0]
    zero_at = (min(positive) / 10) if positive else 1e-5
    xs = [x if x > 0 else zero_at for x in pens]
    columns = list(ridge["columns"])
    scaled = {col: _scaled_path(ridge["coefficients"][col]) for col in columns}
    title = "Ridge path: each coefficient over its largest size"
    if limit is not None and len(columns) > limit:
        moved = sorted(columns, key=lambda c: -(max(scaled[c], default=0.0)
                                                 - min(scaled[c], default=0.0)))
        chosen_set = set(moved[:limit])
        title = (f"Ridge path of the {limit} of {len(columns):,} columns that move most: "
                 "each coefficient over its largest size")
        columns = [c for c in columns if c in chosen_set]
    traces = []
    palette = [TEAL, BRICK, AMBER, INK, TEAL_LIGHT, "#6d5a8f", "#4b7f3a", "#8f5a3c"]
    for i, col in enumerate(columns):
        path = ridge["coefficients"][col]
        ys = scaled[col]
        traces.append({
            "type": "scatter", "mode": "lines", "x": xs, "y": ys, "name": plot_text(col),
            "line": {"color": palette[i % len(palette)], "width": 1.6},
            "customdata": path,
            # The name by reference, not pasted into the template: a name holding
            # "%{x}" must not be read as a placeholder.
            "hovertemplate": "%{fullData.name}<br>penalty %{x:.3g}<br>"
                             "coefficient %{customdata:.4g}<extra></extra>",
        })
    shapes = []
    chosen = ridge.get("chosen")
    if chosen is not None:
        at = chosen["penalty"] if chosen["penalty"] > 0 else zero_at
        shapes.append({"type": "line", "xref": "x", "yref": "paper", "x0": at, "x1": at,
                       "y0": 0, "y1": 1, "line": {"color": INK, "dash": "dash", "width": 1}})
    return {
        "data": traces,
        "layout": _layout(
            title,
            xaxis=_axis("penalty λ (log scale; the left end is λ = 0)", type="log"),
            yaxis=_axis("coefficient ÷ its largest size", range=[-1.05, 1.05]),
            shapes=shapes,
            height=380,
            legend={"font": {"size": 10}},
        ),
    }


def all_figures(diagnosis: dict) -> dict[str, Figure | None]:
    """Every figure the inspection view draws, by the id of its slot on the page."""
    return {
        "heatmap-pearson": correlation_heatmap(diagnosis, "pearson"),
        "heatmap-spearman": correlation_heatmap(diagnosis, "spearman"),
        "spectrum": singular_value_spectrum(diagnosis),
        "inflation": inflation_bars(diagnosis),
        "ridge": ridge_trace(diagnosis),
    }
