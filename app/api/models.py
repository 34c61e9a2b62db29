"""A fitted statsmodels model (or its results) as a Design: its exog, names, weights and rows,
with the formula's terms as groups. Reads attributes only; statsmodels is never imported.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from rankscope.design.design import INTERCEPT, Design
from rankscope.design.names import quoted
from rankscope.tables.errors import InputError

#: Names statsmodels and formulas give the constant column; rankscope calls it INTERCEPT.
CONSTANT_NAMES = ("Intercept", "const")

#: Model classes whose fit is the least-squares fit rankscope computes.
LEAST_SQUARES = ("OLS", "WLS")


@dataclass
class Fitted:
    """A model's design, weights (WLS) and a sentence on where it came from."""

    design: Design
    weights: np.ndarray | None
    source: str
    formula: str | None


def model_of(obj: Any) -> Any | None:
    """The model behind a results object or a model itself; None for anything else."""
    for candidate in (obj, getattr(obj, "model", None)):
        if candidate is not None and all(hasattr(candidate, a) for a in
                                         ("exog", "exog_names", "endog")):
            return candidate
    return None


def _terms(data: Any, names: list[str]) -> dict[str, list[str]]:
    """The formula's terms -> columns: formulaic's model_spec.term_indices or patsy's
    DesignInfo.term_name_slices (statsmodels keeps either as data.model_spec or
    data.design_info); the intercept term is not a group."""
    for attr in ("model_spec", "design_info"):
        spec = getattr(data, attr, None)
        if spec is None:
            continue
        if hasattr(spec, "term_indices"):
            pairs = [(str(t), list(ix)) for t, ix in spec.term_indices.items()]
        elif hasattr(spec, "term_name_slices"):
            pairs = [(str(t), list(range(len(names)))[s])
                     for t, s in spec.term_name_slices.items()]
        else:
            continue
        return {t: [names[i] for i in ix] for t, ix in pairs
                if t not in ("1", "Intercept") and ix}
    return {}


def _weights(model: Any, n: int) -> np.ndarray | None:
    w = getattr(model, "weights", None)
    if w is None or np.ndim(w) == 0:
        return None  # OLS keeps weights = 1.0
    w = np.asarray(w, dtype=np.float64).ravel()
    if w.shape != (n,):
        raise InputError(f"the model's weights have {w.size} values for {n} rows", "model")
    return None if np.all(w == 1.0) else w


def fitted_design(obj: Any) -> Fitted:
    """The Design of a statsmodels model or results object. Raises InputError."""
    model = model_of(obj)
    if model is None:
        raise InputError(f"a {type(obj).__name__} is not a fitted model", "model")
    X = np.asarray(model.exog, dtype=np.float64)
    if X.ndim != 2:
        raise InputError("the model's exog is not a 2-D array", "model")
    y = np.asarray(model.endog, dtype=np.float64)
    if y.ndim != 1:
        raise InputError("the model has more than one response column", "model",
                         "Give a model with one response")
    names = [str(c) for c in model.exog_names]
    data = getattr(model, "data", None)
    terms = _terms(data, names)
    notes: list[str] = []
    kind = type(model).__name__
    # The constant statsmodels found (const_idx) is the intercept when it is a column of
    # ones; other constants keep their names and the core says they are constant.
    const = getattr(data, "const_idx", None)
    if const is not None and np.ndim(const) == 0 and np.all(X[:, int(const)] == 1.0) \
            and INTERCEPT not in names:
        names[int(const)] = INTERCEPT
    if len(set(names)) < len(names):
        twice = next(c for c in names if names.count(c) > 1)
        raise InputError(f"two of the model's columns are named {quoted(twice)}", "model")
    weights = _weights(model, X.shape[0])
    if kind not in LEAST_SQUARES:
        notes.append(f"The model is a {kind}; the fit shown here is least squares on its "
                     "design (rank, dependencies, conditioning and VIF are the design's).")
    if weights is not None and kind != "WLS":
        notes.append("The model's weights are used as least-squares weights.")
    frame = getattr(data, "frame", None)
    total = int(len(frame)) if frame is not None else X.shape[0]
    formula = getattr(model, "formula", None)
    response = str(getattr(model, "endog_names", None) or "y")
    if total > X.shape[0]:
        notes.append(f"The model used {X.shape[0]} of the {total} rows of its data.")
    design = Design(X=np.ascontiguousarray(X), columns=names, y=y, response=response,
                    groups=terms, rows_total=total, rows_used=X.shape[0], notes=notes)
    source = f"statsmodels {kind}" + (f" {formula}" if formula else "")
    return Fitted(design, weights, source, str(formula) if formula else None)
