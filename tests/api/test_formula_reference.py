"""Formula designs against the model matrices formulaic and patsy build directly, and the
messages for bad formulas (never a traceback)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import rankscope
from rankscope.design.design import INTERCEPT
from rankscope.tables.errors import InputError
from tests.api.data import planted, write_csv
from tests.cli.runner import run

FORMULAS = [
    "y ~ u + v + C(g)",
    "y ~ u * g + z",
    "y ~ u + I(u ** 2) + np.log(z + 10) + u:v",
    "y ~ 0 + g + v",
    "y ~ (u + v + z) ** 2 - u:z",
]


def _renamed(columns) -> list[str]:
    return [INTERCEPT if c == "Intercept" else str(c) for c in columns]


@pytest.mark.parametrize("formula", FORMULAS)
def test_formula_design_is_patsys_model_matrix(formula):
    patsy = pytest.importorskip("patsy")
    frame = planted(missing=True)
    design = rankscope.inspect(frame, formula=formula).design
    # Outside reference: patsy.dmatrices (NA rows dropped, treatment coding on sorted levels).
    y_ref, X_ref = patsy.dmatrices(formula, frame, return_type="dataframe")
    # patsy orders columns by the kind of term (categorical parts first); the names match.
    assert sorted(design.columns) == sorted(_renamed(X_ref.columns))
    ref = X_ref.set_axis(_renamed(X_ref.columns), axis=1)[design.columns]
    np.testing.assert_allclose(design.X, ref.to_numpy(), rtol=1e-14, atol=1e-14)
    np.testing.assert_allclose(design.y, y_ref.to_numpy().ravel(), rtol=1e-14, atol=0)
    assert design.rows_used == len(X_ref) and design.rows_total == len(frame)
    # patsy's terms (without the intercept) are the GVIF groups.
    terms = {t: list(X_ref.columns[s]) for t, s in X_ref.design_info.term_name_slices.items()
             if t != "Intercept"}
    assert {t: sorted(c) for t, c in design.groups.items()} == {
        t: sorted(c) for t, c in terms.items()}


STATEFUL = ["y ~ poly(u, 3) + C(g, contr.treatment('south'))", "y ~ center(u) + scale(v)"]


@pytest.mark.parametrize("formula", [*FORMULAS, *STATEFUL])
def test_formula_design_is_formulaics_model_matrix(formula):
    from formulaic import model_matrix

    frame = planted(missing=True)
    design = rankscope.inspect(frame, formula=formula).design
    if formula in STATEFUL:
        # poly, center and scale learn from the rows: rankscope deletes rows with a missing
        # value first (as its recipe does), formulaic after; so the reference gets the rows
        # rankscope keeps.
        frame = frame.dropna(subset=[c for c in ("y", "u", "v", "g") if c in formula])
    # Outside reference: formulaic.model_matrix called directly on the same DataFrame.
    mm = model_matrix(formula, frame)
    assert design.columns == _renamed(mm.rhs.columns)
    np.testing.assert_allclose(design.X, mm.rhs.to_numpy(), rtol=1e-13, atol=1e-13)
    np.testing.assert_allclose(design.y, mm.lhs.to_numpy().ravel(), rtol=1e-14, atol=0)
    groups = {str(t): [str(mm.rhs.columns[i]) for i in ix]
              for t, ix in mm.rhs.model_spec.term_indices.items() if str(t) != "1"}
    assert design.groups == groups


def test_poly_spans_the_powers_and_groups_its_columns():
    frame = planted()
    got = rankscope.inspect(frame, formula="y ~ poly(u, 3) + v")
    cols = [c for c in got.design.columns if c.startswith("poly(u, 3)")]
    assert got.design.groups["poly(u, 3)"] == cols and len(cols) == 3
    P = got.design.X[:, [got.design.columns.index(c) for c in cols]]
    # Reference: orthogonal polynomials span the same space as u, u², u³ beside the constant.
    u = frame["u"].to_numpy()
    powers = np.column_stack([np.ones_like(u), u, u**2, u**3])
    coef, *_ = np.linalg.lstsq(powers, P, rcond=None)
    np.testing.assert_allclose(powers @ coef, P, atol=1e-10)
    assert got.gvif["poly(u, 3)"]["df"] == 3


def test_exact_dependency_is_named_in_the_formulas_names():
    got = rankscope.inspect(planted(), formula="y ~ u + v + w + C(g)")
    assert [r["equation"] for r in got.dependencies] == ["w = u − 2·v"]
    assert got.gvif["C(g)"]["columns"] == ["C(g)[T.north]", "C(g)[T.south]"]


@pytest.mark.parametrize(("formula", "expected"), [
    ("y ~ u + vv", ['formula, character 9: the table has no column named "vv"',
                    'Close matches: "v"']),
    ("y ~ poly(zz, 2)", ["formula, character 10", '"zz"', '"z"']),
    ("y ~ u + (v", ["formula, character 9", "cannot be read"]),
    ("y ~ u ++", ["formula, character 7", "cannot be read"]),
    ("y ~ frobnicate(u)", ['formula, character 5: the formula calls "frobnicate"']),
    ("y + u ~ v", ["left side of the formula makes 2 columns"]),
    ("y ~ u | v", ["formula, character 7: the formula has several parts"]),
    ("", ["the formula is empty"]),
])
def test_bad_formulas_get_a_clear_message(formula, expected, tmp_path):
    with pytest.raises(InputError) as caught:
        rankscope.inspect(planted(), formula=formula)
    for part in expected:
        assert part in caught.value.message
    # The command line says the same in one line, exit code 2, no traceback.
    got = run("check", str(write_csv(planted(), tmp_path)), "--formula", formula)
    assert got.code == 2 and got.out == ""
    assert got.err.count("\n") == 1 and "Traceback" not in got.err
    assert caught.value.message in got.err


def test_transform_that_breaks_a_row_is_named_by_row():
    frame = planted()
    frame.loc[4, "z"] = -50.0
    with pytest.raises(InputError, match=r"record 5: the formula's column \"np.log\(z\)\""):
        rankscope.inspect(frame, formula="y ~ np.log(z)")


def test_response_given_twice_must_agree():
    with pytest.raises(InputError, match="names the response"):
        rankscope.inspect(planted(), "u", formula="y ~ v")
    assert rankscope.inspect(planted(), "y", formula="y ~ v").response == "y"


def test_missing_rows_are_counted_as_the_recipe_counts_them():
    frame = planted(missing=True)
    got = rankscope.inspect(frame, formula="y ~ u + v").design
    assert got.dropped_by == {"v": 9, "y": int((frame["y"].isna() & frame["v"].notna()).sum())}
    assert pd.isna(frame["v"]).sum() == 9


def test_dot_stands_for_every_other_column():
    frame = planted()
    frame["day"] = pd.Timestamp("2024-01-01") + pd.to_timedelta(range(len(frame)), "D")
    dot = rankscope.inspect(frame, formula="y ~ . - w")
    named = rankscope.inspect(frame.drop(columns="day"), formula="y ~ u + v + z + g")
    # Dates are not numbers, so `.` leaves them out, as the recipe does.
    assert dot.columns == named.columns
    np.testing.assert_array_equal(dot.design.X, named.design.X)


def test_stream_and_formula_do_not_mix(tmp_path):
    got = run("check", str(write_csv(planted(), tmp_path)), "--formula", "y ~ u", "--stream")
    assert got.code == 2 and "--stream" in got.err and "Traceback" not in got.err
