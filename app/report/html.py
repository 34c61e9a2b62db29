"""The HTML report: one self-contained page (plotly.js inlined) of a diagnosis and its fit.

Renders finished results only; opens offline, fetches nothing, computes nothing.
"""

from __future__ import annotations

import base64
import hashlib
import json
import re
import time
from collections.abc import Sequence
from functools import lru_cache

from plotly.offline import get_plotlyjs

from rankscope.design.recipe import Recipe
from rankscope.design.steps import describe_step
from rankscope.report import html_sections as sec
from rankscope.report.figures import (
    BRICK,
    GRID,
    INK,
    PAPER,
    TEAL,
    correlation_heatmap,
    inflation_bars,
    ridge_trace,
    singular_value_spectrum,
)
from rankscope.report.text import WIDE_COLUMNS

#: Which figures the report draws, by the id of the chart slot they fill.
CHARTS = ("spectrum", "inflation", "correlation", "ridge")

STYLE = f"""
body {{ margin: 0 auto; max-width: 68rem; padding: 1.5rem; background: {PAPER}; color: {INK};
  font: 15px/1.5 system-ui, -apple-system, 'Segoe UI', sans-serif; }}
h1 {{ font-size: 1.5rem; margin: 0 0 .25rem; }}
h2 {{ font-size: 1.15rem; border-bottom: 2px solid {TEAL}; padding-bottom: .2rem;
  margin-top: 2rem; }}
.meta {{ color: #55626b; margin: 0; }}
table {{ border-collapse: collapse; margin: .75rem 0; font-variant-numeric: tabular-nums; }}
caption {{ text-align: left; font-size: .85rem; color: #55626b; padding-bottom: .25rem; }}
th, td {{ padding: .2rem .6rem; border-bottom: 1px solid {GRID}; text-align: left; }}
th {{ font-weight: 600; }}
.num {{ text-align: right; }}
td.mark {{ background: #f6dfd9; color: {BRICK}; font-weight: 600; }}
.wide {{ overflow-x: auto; }}
ol.equations li {{ margin: .4rem 0; }}
code.equation {{ font-size: 1.05rem; background: #eef5f5; padding: .1rem .4rem; }}
.aside {{ color: #55626b; font-size: .85rem; margin-left: .75rem; }}
.chart {{ width: 100%; min-height: 260px; }}
@media print {{ .chart {{ break-inside: avoid; }} }}
"""


@lru_cache(maxsize=1)
def plotly_bundle() -> str:
    """plotly.min.js from the installed plotly package, safe inside a <script> element."""
    return _script_safe(get_plotlyjs())


def _hash(code: str) -> str:
    """A CSP source for one inline script: its SHA-256 (CSP Level 3, hash-source)."""
    return "'sha256-" + base64.b64encode(hashlib.sha256(code.encode()).digest()).decode() + "'"


@lru_cache(maxsize=1)
def _plotly_hash() -> str:
    return _hash(plotly_bundle())


def _policy(*scripts: str) -> str:
    """The report's own Content-Security-Policy: only its two scripts run, it fetches
    nothing, and it cannot be framed or send forms, so a name that slipped past the
    escaping still could not run or leak anything when the file is opened."""
    return ("default-src 'none'; script-src " + " ".join(scripts)
            + "; style-src 'unsafe-inline'; img-src data: blob:; base-uri 'none'; "
            "form-action 'none'")


def _script_safe(code: str) -> str:
    # Only "</script" can end a script element early; "<\/" means the same in JavaScript.
    return re.sub(r"</(script)", r"<\\/\1", code, flags=re.IGNORECASE)


def _figures_js(diagnosis: dict, heatmap: str) -> tuple[str, set[str]]:
    """The script that draws the charts, and the ids of the charts it draws."""
    d = diagnosis
    # Past WIDE_COLUMNS a p × p heatmap is grey noise (and 60 MB at 1,000 columns): the
    # report leaves it out and says where the block view is (correlation_note).
    wide = len(d["columns"]) > WIDE_COLUMNS
    chosen = {
        "spectrum": singular_value_spectrum(d),
        "inflation": inflation_bars(d),
        "correlation": None if wide else (correlation_heatmap(d, heatmap)
                                          or correlation_heatmap(d, "pearson")),
        "ridge": ridge_trace(d),
    }
    shown = {k: v for k, v in chosen.items() if v is not None}
    # A JavaScript literal, not JSON: NaN stays NaN. "<", ">" and "&" are escaped so that no
    # column name can close the script element.
    text = json.dumps(shown, ensure_ascii=False)
    text = text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")
    return (f"const FIGURES = {text};\n"
            "for (const [key, fig] of Object.entries(FIGURES)) {\n"
            "  const slot = document.getElementById('chart-' + key);\n"
            "  if (slot) Plotly.newPlot(slot, fig.data, fig.layout,\n"
            "                           {displaylogo: false, responsive: true});\n"
            "}\n"), set(shown)


def render_html(
    diagnosis: dict,
    *,
    title: str,
    source: str | None = None,
    rows: tuple[int, int] | None = None,
    recipe: Recipe | None = None,
    notes: Sequence[str] = (),
    heatmap: str = "pearson",
    made_at: float | None = None,
) -> str:
    """The report page: exact dependencies first, then rank and condition numbers, the index
    and share table, VIF, the fit, the cautions, the recipe and the notes.

    diagnosis: Diagnosis.to_dict(); rows: (rows used, rows in the table); recipe: listed as
    sentences; notes: what the reader and the recipe said (Table.notes, Design.notes);
    heatmap: "pearson" or "spearman".
    """
    d = diagnosis
    script, shown = _figures_js(d, heatmap)
    when = time.strftime("%Y-%m-%d %H:%M", time.localtime(made_at or time.time()))
    meta = [f"Made by rankscope on {when}"]
    if source:
        meta.insert(0, f"Table: {source}")
    if rows is not None:
        meta.append(f"rows used: {rows[0]:,} of {rows[1]:,}")
    resp = d.get("response")
    meta.append(f"{len(d['columns'])} design columns, "
                + (f"response {resp}" if resp else "no response"))
    charts_for = {"correlation": "Correlations of the non-constant columns",
                  "ridge": "Ridge path"}
    extra = [sec.section(k, t, sec.chart(k)) for k, t in charts_for.items() if k in shown]
    if len(d["columns"]) > WIDE_COLUMNS:
        extra.insert(0, sec.section("correlation", charts_for["correlation"], sec.para(
            f"Not drawn past {WIDE_COLUMNS} columns: a {len(d['columns']):,} × "
            f"{len(d['columns']):,} heatmap cannot be read. The app shows the columns that move "
            "together block by block, with a click into one block's heatmap; "
            "`rankscope check --json` has every correlation.")))
    all_notes = [*notes, *d.get("notes", [])]
    steps = [describe_step(s) for s in recipe] if recipe is not None else []
    drawing = _script_safe(script)
    policy = _policy(_plotly_hash(), _hash(drawing))
    body = [
        f"<header><h1>{sec.esc(title)}</h1>"
        + "".join(f'<p class="meta">{sec.esc(m)}</p>' for m in meta) + "</header>",
        sec.dependencies(d),
        sec.conditioning(d),
        sec.index_table(d),
        sec.inflation(d),
        sec.fit(d),
        *extra,
        sec.cautions(d),
        sec.listing("recipe", "How the design was made", steps or
                    ["The table's columns as read, with no changes."], ordered=bool(steps)),
        sec.listing("notes", "Notes", all_notes),
    ]
    return "".join([
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">",
        f'<meta http-equiv="Content-Security-Policy" content="{sec.esc(policy)}">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{sec.esc(title)}</title><style>{STYLE}</style>",
        f"<script>{plotly_bundle()}</script></head>\n<body>",
        *body,
        f"<script>{drawing}</script></body></html>\n",
    ])
