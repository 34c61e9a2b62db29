"""inspect(): data (pandas, Arrow, polars, NumPy, a path) or a fitted statsmodels model in,
an Inspection out. The shell around tables -> design -> core; no numerics here.
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from rankscope.api.inputs import as_table, is_table_like
from rankscope.api.models import fitted_design, model_of
from rankscope.api.result import EXTRAS, Inspection
from rankscope.design.design import Design
from rankscope.design.names import quoted, suggestion
from rankscope.design.recipe import Recipe
from rankscope.tables.errors import InputError
from rankscope.tables.table import Table


def _recipe(recipe: Any) -> Recipe:
    """A Recipe from a Recipe, a list of steps, recipe JSON text or a JSON file's path."""
    if recipe is None:
        return Recipe()
    if isinstance(recipe, Recipe):
        return recipe
    if isinstance(recipe, list | tuple):
        return Recipe(recipe)
    if isinstance(recipe, os.PathLike) or (isinstance(recipe, str)
                                           and not recipe.lstrip().startswith(("{", "["))):
        return Recipe.from_json(Path(recipe).read_text(encoding="utf-8"))
    if isinstance(recipe, str):
        return Recipe.from_json(recipe)
    raise InputError(f"a recipe cannot be a {type(recipe).__name__}", "recipe",
                     "Give a Recipe, a list of steps, recipe JSON or the path of a JSON file")


def _weights(weights: Any, table: Table, kept: np.ndarray) -> np.ndarray | None:
    """Weights on the rows the design uses: a column's name or one value per table row."""
    if weights is None:
        return None
    if isinstance(weights, str):
        if weights not in table.columns:
            raise InputError(f"the table has no column named {quoted(weights)}", "weights",
                             suggestion(weights, table.columns))
        if table.kinds.get(weights) != "numeric":
            raise InputError(f"the weights column {quoted(weights)} is not numeric", "weights")
        values = np.asarray(table.frame[weights], dtype=np.float64)
    else:
        values = np.asarray(weights, dtype=np.float64).ravel()
        if values.shape != (table.n_rows,):
            raise InputError(f"{values.size} weights for {table.n_rows} rows", "weights",
                             "Give one weight per row of the data")
    values = values[kept]
    bad = ~(np.isfinite(values) & (values > 0))
    if bad.any():
        raise InputError(f"{int(bad.sum())} weight(s) on the rows used are missing, zero, "
                         "negative or infinite", "weights",
                         "Give a positive weight to every row the design uses")
    return values


def _from_table(table: Table, response: str | None, formula: str | None, recipe: Recipe,
                weights: Any) -> tuple[Design, np.ndarray | None]:
    from rankscope.design.replay import trace_design

    steps = recipe.steps
    if formula is not None:
        from rankscope.design.formula import formula_trace

        lhs, tilde, _ = formula.partition("~")
        if response is not None and (not tilde or lhs.strip().strip("`") != response):
            raise InputError("the formula names the response left of ~", "response",
                             f"Write the formula as '{response} ~ ...' and leave out response=")
        design, kept = formula_trace(table, formula, steps)
        return design, _weights(weights, table, kept)
    if response is not None:
        if response not in table.columns:
            raise InputError(f"the table has no column named {quoted(response)}", "response",
                             suggestion(response, table.columns))
        steps = [{"step": "response", "column": response}, *steps]
    if isinstance(weights, str) and weights in table.columns:
        steps = [{"step": "drop", "column": weights}, *steps]  # weights are not a predictor
    trace = trace_design(table, Recipe(steps).steps)
    return trace.design, _weights(weights, table, trace.kept)


def inspect(
    data: Any,
    response: str | None = None,
    *,
    formula: str | None = None,
    recipe: Any = None,
    weights: Any = None,
    keep: Sequence[str] | None = None,
    tol: float | None = None,
    names: Sequence[str] | None = None,
    extras: Sequence[str] = EXTRAS,
) -> Inspection:
    """Diagnose the design matrix of a linear model.

    Parameters
    ----------
    data : DataFrame, pyarrow.Table, polars.DataFrame, numpy.ndarray, path, or fitted model
        The table (pandas, Arrow, polars, a 2-D NumPy array with `names`, or the path of
        a CSV/TSV, Excel or Parquet file), or a fitted statsmodels model or results object
        (its exog, exog_names, weights and the rows it used; a formula's terms become the
        GVIF groups).
    response : str, optional
        The response column (y). With `formula`, the formula names it instead.
    formula : str, optional
        A formula such as ``"y ~ a + C(g) + a:b"`` (see docs/python-api.md); it builds the
        starting design: its columns carry the formula's names, its terms are the GVIF
        groups.
    recipe : Recipe, list of dict, str or path, optional
        Recipe steps applied after the table (or the formula's columns).
    weights : str or array_like, optional
        Least-squares weights: a column's name or one positive value per row.
    keep : sequence of str, optional
        Design columns to keep in the basis when columns are exactly dependent, first
        named first.
    tol : float, optional
        Absolute rank tolerance on the singular values of the unit-length columns
        (default σ_max·max(n, p)·eps).
    names : sequence of str, optional
        Column names of a NumPy array.
    extras : sequence of str, default ("spearman", "order", "proportions", "spectra")
        The extras to compute, as `check --with` names them: "spearman" (Spearman's rank
        correlations, ranking every row), "order" (the clustered display order),
        "proportions" and "spectra" (on a design of 200 columns or more: every dimension's
        variance proportions, the raw and centred singular values). All by default, so
        every frame is complete; () skips them (faster on wide or long tables), and each
        one left out is None where docs/json.md says.

    Returns
    -------
    Inspection
        The diagnosis with its design; shows as the HTML report in a notebook.

    Raises
    ------
    InputError
        For anything the user can fix (unknown column, bad formula, bad weights), with
        what, where and what to do.
    """
    if tol is not None and not (isinstance(tol, int | float) and math.isfinite(tol)
                                and tol > 0):
        raise InputError(f"the tolerance must be a positive number, not {tol!r}", "tol")
    if isinstance(extras, str):
        extras = [extras]
    for extra in extras:
        if extra not in EXTRAS:
            raise InputError(f"there is no extra named {extra!r}", "extras",
                             "Ask for " + ", ".join(f'"{e}"' for e in EXTRAS)
                             + ', e.g. extras=("spearman",)')
    # Tables are never taken for models, whatever their columns are called.
    model = None if is_table_like(data) else model_of(data)
    if model is not None:
        if formula is not None or recipe is not None or weights is not None or names:
            raise InputError("a fitted model brings its own design, response and weights",
                             "inspect", "Pass only the model (with keep= or tol=), or its "
                             "data with formula=")
        fitted = fitted_design(data)
        design, w, source, table_notes = fitted.design, fitted.weights, fitted.source, []
        if response is not None and response != design.response:
            raise InputError(f"the model's response is {quoted(design.response)}", "response")
        used_formula: str | None = fitted.formula
        used_recipe = None
    else:
        table = as_table(data, names)
        rec = _recipe(recipe)
        design, w = _from_table(table, response, formula, rec, weights)
        source, table_notes = table.source, list(table.notes)
        used_formula, used_recipe = formula, rec
    keep = list(keep or [])
    for name in keep:
        if name not in design.columns:
            raise InputError(f"the design has no column named {quoted(name)}", "keep",
                             suggestion(name, design.columns))
    from rankscope.core.diagnosis import diagnose_factor
    from rankscope.core.factor import factorize
    from rankscope.report.remedies import remedies_of

    F = factorize(design.X, design.columns, design.y, w)
    diagnosis = diagnose_factor(F, response=design.response, groups=design.groups,
                                keep=keep or None, tol=tol,
                                rank_correlation="spearman" in extras, order="order" in extras,
                                all_proportions="proportions" in extras,
                                spectra="spectra" in extras)
    steps = list(used_recipe.steps) if used_recipe is not None else []
    found = remedies_of(diagnosis, F, design, steps, keep or None, tol)
    return Inspection(diagnosis, design, source=source, table_notes=table_notes,
                      formula=used_formula, recipe=used_recipe, weights=w,
                      remedies=found.shown, remedies_not_previewed=found.unpreviewed,
                      extras=extras)
