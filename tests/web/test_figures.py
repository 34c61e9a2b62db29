"""The figure builders of app/report/figures.py against outside references: numpy's
corrcoef and SVD, and the definition of an infinite VIF (an exact dependency)."""

from __future__ import annotations

import json

import numpy as np
import pytest

from rankscope.core import diagnose
from rankscope.report import figures
from tests.web.conftest import units_table


@pytest.fixture(scope="module")
def case():
    t = units_table()
    names = ["(intercept)", "temp_c", "temp_f", "mass_lb", "mass_kg", "hours"]
    X = np.column_stack([np.ones(len(t["load"]))] + [t[c] for c in names[1:]])
    d = diagnose(X, names, np.asarray(t["load"]), response="load", ridge_penalty=0.1)
    return X, names, json.loads(json.dumps(d.to_dict()))


def test_heatmap_is_the_correlation_matrix_reordered(case) -> None:
    X, names, d = case
    fig = figures.correlation_heatmap(d, "pearson")
    trace = fig["data"][0]
    ref = np.corrcoef(X[:, 1:], rowvar=False)  # reference: numpy.corrcoef
    for i, a in enumerate(trace["x"]):
        for j, b in enumerate(trace["x"]):
            assert trace["z"][i][j] == pytest.approx(
                ref[names.index(a) - 1, names.index(b) - 1], abs=1e-12)
    assert sorted(trace["x"]) == sorted(names[1:])


def test_spectrum_draws_every_singular_value_and_the_tolerance(case) -> None:
    X, _, d = case
    fig = figures.singular_value_spectrum(d)
    shown = fig["data"][0]["y"]
    Xe = X / np.linalg.norm(X, axis=0)
    ref = np.linalg.svd(Xe, compute_uv=False)  # reference: numpy SVD of unit-length columns
    for s, r in zip(shown[:4], ref[:4], strict=True):
        assert s == pytest.approx(r, rel=1e-10)
    # Two exact relations (°F–°C, lb–kg): the two smallest sit below the tolerance line.
    tol = fig["data"][1]["y"][0]
    assert tol == d["rank_tolerance"]
    assert sum(s <= tol for s in shown) == 2
    assert json.dumps(fig, allow_nan=False)  # plain JSON, as the report embeds it


def test_inflation_bars_mark_exact_dependencies_infinite(case) -> None:
    _, _, d = case
    fig = figures.inflation_bars(d)
    text = dict(zip(fig["data"][0]["y"], fig["data"][0]["text"], strict=True))
    # reference: a column that is an exact combination of others has R² = 1, so VIF = ∞
    for col in ("temp_c", "temp_f", "mass_lb", "mass_kg"):
        assert text[col] == "∞"
    assert text["hours"] != "∞"


def test_ridge_trace_scales_each_path_to_its_largest_size(case) -> None:
    _, _, d = case
    fig = figures.ridge_trace(d)
    for trace in fig["data"]:
        assert max(abs(v) for v in trace["y"]) == pytest.approx(1.0)
        # reference: the raw path is kept for the hover text, unscaled
        assert trace["customdata"] == d["ridge"]["coefficients"][trace["name"]]
    assert fig["layout"]["shapes"][0]["x0"] == pytest.approx(0.1)


def test_spearman_missing_gives_no_figure(case) -> None:
    _, _, d = case
    assert figures.correlation_heatmap({**d, "correlations": {**d["correlations"],
                                                              "spearman": None}},
                                       "spearman") is None
