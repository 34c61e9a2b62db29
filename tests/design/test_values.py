"""Values each step computes, against numpy and pandas computed independently here.

Each check names its reference in a comment.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from rankscope.design.recipe import Recipe, build_design
from tests.design.tables import table

RNG = np.random.default_rng(20240611)
N = 30
X = RNG.uniform(0.5, 4.0, N)
Z = RNG.normal(size=N)
W = RNG.normal(size=N) + 0.5 * Z
C = RNG.choice(["beta", "alpha", "gamma"], N)


def data() -> pd.DataFrame:
    return pd.DataFrame({"x": X, "z": Z, "w": W, "c": C})


def column(steps: list[dict], name: str) -> np.ndarray:
    design = build_design(table(data()), Recipe(steps))
    return design.X[:, design.columns.index(name)]


def test_center() -> None:
    # Reference: numpy, x - mean(x).
    np.testing.assert_allclose(
        column([{"step": "center", "column": "x"}], "x (centered)"), X - X.mean()
    )


def test_standardize() -> None:
    got = column([{"step": "standardize", "column": "z"}], "z (standardized)")
    # Reference: numpy, (x - mean) / std with ddof=1 (the sample standard deviation).
    np.testing.assert_allclose(got, (Z - np.mean(Z)) / np.std(Z, ddof=1))


def test_unit_length() -> None:
    got = column([{"step": "unit_length", "column": "z"}], "z (unit length)")
    # Reference: numpy.linalg.norm (Euclidean length); the result has length 1.
    np.testing.assert_allclose(got, Z / np.linalg.norm(Z))
    assert np.linalg.norm(got) == pytest.approx(1.0)


def test_multiply() -> None:
    got = column([{"step": "multiply", "column": "x", "by": 1000}], "x*1000")
    np.testing.assert_allclose(got, X * 1000)  # reference: numpy multiplication


@pytest.mark.parametrize(
    ("fields", "name", "reference"),
    [
        ({}, "log(x)", np.log(X)),  # reference: numpy.log (natural)
        ({"base": 10}, "log10(x)", np.log10(X)),  # reference: numpy.log10
        ({"base": 2}, "log2(x)", np.log2(X)),  # reference: numpy.log2
        ({"base": 3}, "log3(x)", np.log(X) / np.log(3)),  # reference: change of base
        ({"shift": 1}, "log(x+1)", np.log1p(X)),  # reference: numpy.log1p = log(1 + x)
    ],
)
def test_log(fields: dict, name: str, reference: np.ndarray) -> None:
    got = column([{"step": "log", "column": "x", **fields}], name)
    np.testing.assert_allclose(got, reference, rtol=1e-12)


@pytest.mark.parametrize("exponent", [2, 3, 0.5, -1, -1.5])
def test_power(exponent: float) -> None:
    step = {"step": "power", "column": "x", "exponent": exponent, "name": "p"}
    # Reference: Python's ** on each value (x is positive, so every power is real).
    np.testing.assert_allclose(column([step], "p"), [v**exponent for v in X], rtol=1e-12)


def test_power_of_negative_with_whole_exponent() -> None:
    step = {"step": "power", "column": "z", "exponent": 3, "name": "z3"}
    np.testing.assert_allclose(column([step], "z3"), Z**3)  # reference: numpy power


def test_product_and_square() -> None:
    design = build_design(
        table(data()),
        Recipe(
            [
                {"step": "product", "columns": ["x", "z"], "name": "xz"},
                {"step": "product", "columns": ["z", "z"], "name": "zz"},
            ]
        ),
    )
    # Reference: numpy elementwise multiplication.
    np.testing.assert_allclose(design.X[:, design.columns.index("xz")], X * Z)
    np.testing.assert_allclose(design.X[:, design.columns.index("zz")], Z * Z)


@pytest.mark.parametrize(
    ("method", "reference"),
    [
        ("sum", X + Z + W),  # reference: numpy sum
        ("mean", (X + Z + W) / 3),  # reference: arithmetic mean
    ],
)
def test_combine_sum_and_mean(method: str, reference: np.ndarray) -> None:
    step = {"step": "combine", "columns": ["x", "z", "w"], "method": method, "name": "g"}
    design = build_design(table(data()), Recipe([step]))
    np.testing.assert_allclose(design.X[:, design.columns.index("g")], reference)
    assert "x" not in design.columns and "w" not in design.columns  # members are replaced


def test_combine_difference_and_ratio() -> None:
    diff = {"step": "combine", "columns": ["z", "x"], "method": "difference", "name": "d"}
    ratio = {"step": "combine", "columns": ["z", "x"], "method": "ratio", "name": "r"}
    np.testing.assert_allclose(column([diff], "d"), Z - X)  # reference: first minus second
    np.testing.assert_allclose(column([ratio], "r"), Z / X)  # reference: first over second


def test_first_component_matches_svd() -> None:
    step = {
        "step": "combine",
        "columns": ["x", "z", "w"],
        "method": "first_component",
        "name": "pc",
    }
    got = column([step], "pc")
    # Reference: numpy.linalg.svd of the group standardized with numpy (ddof=1); the
    # first principal component scores are U[:, 0] * s[0], equal up to sign.
    G = np.column_stack([X, Z, W])
    G = (G - G.mean(axis=0)) / G.std(axis=0, ddof=1)
    u, s, _ = np.linalg.svd(G, full_matrices=False)
    ref = u[:, 0] * s[0]
    sign = np.sign(ref @ got)
    np.testing.assert_allclose(got, sign * ref, atol=1e-10)


def test_first_component_share_is_noted() -> None:
    step = {"step": "combine", "columns": ["z", "w"], "method": "first_component", "name": "pc"}
    design = build_design(table(data()), Recipe([step]))
    # Reference: share = s1^2 / sum(s^2) from numpy.linalg.svd of the standardized pair.
    G = np.column_stack([Z, W])
    G = (G - G.mean(axis=0)) / G.std(axis=0, ddof=1)
    s = np.linalg.svd(G, compute_uv=False)
    share = f"{s[0] ** 2 / np.sum(s**2):.0%}"
    assert any(share in note and '"pc"' in note for note in design.notes)


@pytest.mark.parametrize("reference", [None, "beta", "all"])
def test_indicators_match_get_dummies(reference: str | None) -> None:
    step = {"step": "indicators", "column": "c"}
    if reference is not None:
        step["reference"] = reference
    design = build_design(table(data()), Recipe([step]))
    # Reference: pandas.get_dummies, one 0/1 column per level, levels sorted.
    dummies = pd.get_dummies(pd.Series(C), dtype=float).sort_index(axis=1)
    dropped = {None: "alpha", "beta": "beta", "all": None}[reference]
    if dropped is not None:
        dummies = dummies.drop(columns=dropped)
    names = [f"c[{level}]" for level in dummies.columns]
    assert design.groups["c"] == names
    np.testing.assert_array_equal(design.X[:, [design.columns.index(n) for n in names]], dummies)


def test_all_levels_show_the_dummy_trap() -> None:
    step = {"step": "indicators", "column": "c", "reference": "all"}
    design = build_design(table(data()), Recipe([step]))
    cols = [design.columns.index(n) for n in design.groups["c"]]
    # Reference: each row has exactly one level, so the indicators add up to the intercept
    # column of ones (the classic dummy-variable trap); numpy.linalg.matrix_rank shows it.
    np.testing.assert_array_equal(design.X[:, cols].sum(axis=1), design.X[:, 0])
    assert np.linalg.matrix_rank(design.X) == design.X.shape[1] - 1


def test_kind_numeric_to_categorical() -> None:
    frame = pd.DataFrame({"grade": [1.0, 2.0, 3.0, 2.0, 1.0], "v": [1.0, 4.0, 2.0, 8.0, 5.0]})
    design = build_design(
        table(frame), Recipe([{"step": "kind", "column": "grade", "to": "categorical"}])
    )
    # Reference: pandas.get_dummies of the codes as text, first level dropped.
    ref = pd.get_dummies(frame["grade"].astype(int).astype(str), dtype=float)[["2", "3"]]
    assert design.groups["grade"] == ["grade[2]", "grade[3]"]
    np.testing.assert_array_equal(design.X[:, 1:3], ref.to_numpy())


def test_kind_categorical_to_numeric_and_date_to_numeric() -> None:
    frame = pd.DataFrame(
        {
            "n": pd.Categorical(["1.5", "2", "-3", "2"]),
            "d": pd.to_datetime(
                ["1970-01-02", "2000-01-01", "2024-02-29 12:00", "1969-12-31"], format="ISO8601"
            ),
        }
    )
    design = build_design(
        table(frame),
        Recipe(
            [
                {"step": "kind", "column": "n", "to": "numeric"},
                {"step": "kind", "column": "d", "to": "numeric"},
            ]
        ),
    )
    np.testing.assert_array_equal(design.X[:, 1], [1.5, 2.0, -3.0, 2.0])  # reference: float()
    # Reference: pandas Timestamp arithmetic, days since 1970-01-01 (10957 for 2000-01-01,
    # a value from memory that the pandas line below confirms).
    days = (frame["d"] - pd.Timestamp("1970-01-01")) / pd.Timedelta(days=1)
    np.testing.assert_allclose(design.X[:, 2], days.to_numpy())
    assert design.X[1, 2] == 10957.0


def test_kind_boolean_round_trip() -> None:
    frame = pd.DataFrame({"b": pd.array([True, False, True], dtype="boolean"), "v": [1.0, 0, 1]})
    design = build_design(
        table(frame),
        Recipe(
            [
                {"step": "kind", "column": "b", "to": "categorical"},
                {"step": "kind", "column": "v", "to": "boolean"},
            ]
        ),
    )
    # Reference: "false" sorts before "true", so "true" keeps the indicator; 0/1 stay 0/1.
    assert design.columns == ["(intercept)", "b[true]", "v"]
    np.testing.assert_array_equal(design.X[:, 1:], [[1, 1], [0, 0], [1, 1]])
