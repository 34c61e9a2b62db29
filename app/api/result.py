"""Inspection: a Diagnosis with its design, shown in notebooks (HTML report, short repr) and
given as DataFrames and the JSON contract. Formats finished results; computes nothing.
"""

from __future__ import annotations

import json
import math
from collections.abc import Sequence
from html import escape
from typing import Any

import numpy as np
import pandas as pd

from rankscope.core.correlation import EXTRAS
from rankscope.core.diagnosis import Diagnosis
from rankscope.design.design import Design
from rankscope.design.recipe import Recipe

#: Height of the report frame in a notebook; it scrolls inside and can be resized.
FRAME_HEIGHT = 760


def _inf(value: float | None) -> float:
    """The contract's null (infinite or undefined) as infinity, for a numeric column."""
    return math.inf if value is None else float(value)


class Inspection:
    """The diagnosis of one design, as returned by `inspect`.

    Every field of the `Diagnosis` (rank, dependencies, vif, gvif, fit, …) reads as an
    attribute. In a notebook it shows as the HTML report; ``repr`` is a short summary.

    Attributes
    ----------
    diagnosis : rankscope.core.diagnosis.Diagnosis
        The results, as plain types.
    design : rankscope.design.design.Design
        The design that was diagnosed (X, columns, y, groups, rows used).
    source : str
        Where the data came from.
    remedies : list of dict
        The remedies, previewed and ranked (the JSON contract's ``remedies``).
    remedies_not_previewed : list of dict
        The remedies past the preview budget of a wide design (kind, label, steps, keep):
        apply one to see its numbers.
    """

    def __init__(self, diagnosis: Diagnosis, design: Design, *, source: str,
                 table_notes: list[str] | None = None, formula: str | None = None,
                 recipe: Recipe | None = None, weights: np.ndarray | None = None,
                 remedies: list[dict] | None = None,
                 remedies_not_previewed: list[dict] | None = None,
                 extras: Sequence[str] = EXTRAS) -> None:
        self.diagnosis = diagnosis
        self.extras = [e for e in EXTRAS if e in extras]
        self.remedies = list(remedies or [])
        self.remedies_not_previewed = list(remedies_not_previewed or [])
        self.design = design
        self.source = source
        self.table_notes = list(table_notes or [])
        self.formula = formula
        self.recipe = recipe
        self.weights = weights

    def __getattr__(self, name: str) -> Any:
        # Only called for names the wrapper lacks: those are the Diagnosis' fields.
        if name.startswith("__") or name == "diagnosis":
            raise AttributeError(name)
        return getattr(self.diagnosis, name)

    def __dir__(self) -> list[str]:
        return sorted(set(super().__dir__()) | set(vars(self.diagnosis)))

    # ------------------------------------------------------------ the contract

    def to_dict(self) -> dict:
        """The diagnosis as the JSON contract.

        Returns
        -------
        dict
            The document of ``rankscope check --json`` (docs/diagnosis.schema.json) in plain
            types: the Diagnosis' fields plus the previewed remedies, source, design, cautions
            and (empty) checks; infinite or undefined numbers are None.
        """
        from rankscope.report.checks import check_document, json_ready

        found = self.diagnosis.to_dict() | {
            "remedies": self.remedies, "remedies_not_previewed": self.remedies_not_previewed}
        return json_ready(check_document(found, self.design, self.source, self.table_notes, [],
                                         self.extras))

    def to_json(self, indent: int | None = 2) -> str:
        """The diagnosis as JSON text.

        Parameters
        ----------
        indent : int or None
            Indentation of the JSON text (None: one line).

        Returns
        -------
        str
            ``to_dict()`` as JSON; infinite or undefined numbers are null.
        """
        return json.dumps(self.to_dict(), allow_nan=False, indent=indent)

    # ------------------------------------------------------------ tables

    def vif_frame(self) -> pd.DataFrame:
        """The variance inflation factors.

        Returns
        -------
        pandas.DataFrame
            Indexed by design column: ``vif`` (∞ in an exact dependency, NaN where the
            column has none, such as the constant), ``tolerance`` (1/VIF),
            ``se_inflation`` (√VIF: the standard error is that many times what uncorrelated
            columns would give) and ``note`` (why a column has no VIF).
        """
        d = self.diagnosis
        rows = []
        for c in d.columns:
            if c in d.vif:
                v = _inf(d.vif[c])
                rows.append((c, v, d.tolerance.get(c, 0.0), math.sqrt(v), ""))
            else:
                rows.append((c, math.nan, math.nan, math.nan, d.vif_absent.get(c, "")))
        return pd.DataFrame(rows, columns=["column", "vif", "tolerance", "se_inflation", "note"]
                            ).set_index("column")

    def gvif_frame(self) -> pd.DataFrame:
        """The generalized variance inflation factors of the groups.

        Returns
        -------
        pandas.DataFrame
            Indexed by group (a formula term or a categorical column): ``columns``, ``df``,
            ``gvif`` and ``gvif_scaled`` = GVIF^(1/(2·df)); ∞ when a member is in an exact
            dependency.
        """
        rows = [(g, ", ".join(v["columns"]), v["df"], _inf(v["gvif"]),
                 _inf(v["gvif_scaled"])) for g, v in self.diagnosis.gvif.items()]
        return pd.DataFrame(rows, columns=["group", "columns", "df", "gvif", "gvif_scaled"]
                            ).set_index("group")

    def index_frame(self) -> pd.DataFrame:
        """The condition indices with the variance-decomposition proportions.

        Returns
        -------
        pandas.DataFrame
            One row per dimension: ``condition_index`` (∞ for an exact dependency),
            ``exact``, then one column per design column holding its proportion.
        """
        d = self.diagnosis
        # A wide design's rows of low index have no proportions unless asked for
        # (all_proportions=True): NaN there.
        frame = pd.DataFrame([row or {} for row in d.variance_proportions], columns=d.columns)
        frame.insert(0, "exact", d.index_exact)
        frame.insert(0, "condition_index", [_inf(x) for x in d.condition_indices])
        frame.index.name = "dimension"
        return frame

    def dependencies_frame(self) -> pd.DataFrame:
        """The exact linear dependencies.

        Returns
        -------
        pandas.DataFrame
            One row per dependency: ``column`` (the dependent one), ``equation`` in the
            design's names, ``combination`` (coefficient per column), ``residual`` and
            ``verified`` (whether it holds on the rows).
        """
        rows = [(r["column"], r["equation"], dict(r["combination"]), r["residual"],
                 r.get("verified")) for r in self.diagnosis.dependencies]
        return pd.DataFrame(rows, columns=["column", "equation", "combination", "residual",
                                           "verified"])

    def fit_frame(self) -> pd.DataFrame:
        """The least-squares fit.

        Returns
        -------
        pandas.DataFrame
            Indexed by design column: ``coefficient``, ``std_error``, ``t`` and ``p`` (NaN
            for a column aliased by an exact dependency); empty without a response.
        """
        fit = self.diagnosis.fit
        if fit is None:
            return pd.DataFrame(columns=["coefficient", "std_error", "t", "p"])
        cols = self.diagnosis.columns

        def val(key: str, c: str) -> float:
            v = fit[key].get(c)
            return math.nan if v is None else float(v)

        return pd.DataFrame({
            "coefficient": [val("coefficients", c) for c in cols],
            "std_error": [val("std_errors", c) for c in cols],
            "t": [val("t_values", c) for c in cols],
            "p": [val("p_values", c) for c in cols],
        }, index=pd.Index(cols, name="column"))

    # ------------------------------------------------------------ display

    def report_html(self, title: str | None = None) -> str:
        """The self-contained HTML report (plotly.js inlined; fetches nothing)."""
        from rankscope.report.html import render_html

        d = self.diagnosis.to_dict()
        notes = [*self.table_notes, *self.design.notes]
        return render_html(d, title=title or f"rankscope: {self.source}", source=self.source,
                           rows=(self.design.rows_used, self.design.rows_total),
                           recipe=self.recipe if self.recipe else None, notes=notes)

    def _repr_html_(self) -> str:
        # The report is a whole page with its own styles, scripts and policy; a sandboxed
        # frame keeps it from touching the notebook's page (and the notebook's from it).
        doc = escape(self.report_html(), quote=True)
        return (f'<iframe class="rankscope-report" sandbox="allow-scripts allow-downloads" '
                f'title="rankscope report" srcdoc="{doc}" style="width:100%;'
                f'height:{FRAME_HEIGHT}px;border:1px solid #ccd;resize:vertical"></iframe>')

    def text(self) -> str:
        """The full terminal report, as `rankscope check` prints it."""
        from rankscope.report.text import render_text

        return render_text(self.diagnosis.to_dict(), self.design, source=self.source,
                           notes=self.table_notes)

    def __repr__(self) -> str:
        d = self.diagnosis
        p = len(d.columns)
        lines = [f"<rankscope Inspection of {self.source}: {d.n_rows} rows, {p} columns, "
                 + (f"response {d.response}>" if d.response else "no response>")]
        short = "" if d.full_rank else f" (deficient by {p - d.rank})"
        lines.append(f"  rank {d.rank} of {p}{short}")
        for r in d.dependencies[:5]:
            lines.append(f"  exact: {r['equation']}")
        if len(d.dependencies) > 5:
            lines.append(f"  … and {len(d.dependencies) - 5} more exact dependencies")
        finite = [x for x, e in zip(d.condition_indices, d.index_exact, strict=True)
                  if not e and x is not None]
        if finite:
            lines.append(f"  largest condition index apart from exact ones: {max(finite):.4g}")
        vifs = {c: v for c, v in d.vif.items() if v is not None}
        if vifs:
            top = max(vifs, key=vifs.__getitem__)
            lines.append(f"  largest finite VIF: {vifs[top]:.4g} ({top})")
        if d.fit is not None and d.fit.get("r_squared") is not None:
            lines.append(f"  fit: R² {d.fit['r_squared']:.4g}, residual std "
                         f"{d.fit['residual_std']:.4g}, {d.fit['df_residual']} residual df")
        return "\n".join(lines)
