"""Everyday rank-deficient designs, each at three seeds and in many column orders, checked
against an exact rational reference on the stored float64 values (tests/core/exact.py),
numpy, statsmodels, or a named textbook identity.

Where a planted relation is computed in floating point (stamp = 1.7e9 + 3600·hours), the
stored columns are, in exact arithmetic, independent: the rounding leaves a residual of
about eps relative, which no numerical rank rule keeps. The exact reference is therefore
taken on the planted basis (the dependent column left out), which is the model the rank
rule describes.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest
import statsmodels.api as sm
from statsmodels.stats.outliers_influence import variance_inflation_factor

from rankscope.core import Diagnosis
from tests.core import exact as ex
from tests.core.battery import (
    INT,
    check_dependency_fields,
    check_rank_counts,
    check_vif_none_iff_involved,
    numpy_rank,
    orders,
    over_orders,
    rank_path,  # noqa: F401 - a fixture (pytestmark)
    rel_err,
    run,
    support,
    unit_length,
)

pytestmark = pytest.mark.usefixtures("rank_path")

SEEDS = (0, 1, 2)


def stack(cols: dict[str, np.ndarray], names: list[str]) -> np.ndarray:
    """The columns `names` side by side."""
    return np.column_stack([cols[c] for c in names])


def exact_vifs(cols: dict[str, np.ndarray], design: list[str]) -> dict[str, float]:
    """Exact centered VIF of every column of `design` (constant added by the reference)."""
    got = ex.vifs([ex.column(cols[c]) for c in design])
    out = {}
    for j, c in enumerate(design):
        v = got[j]
        assert v is not None, f"reference design has {c} in the span of the others"
        out[c] = float(v)
    return out


def exact_rss(cols: dict[str, np.ndarray], design: list[str], y: np.ndarray) -> float:
    """Exact least-squares RSS of y on the columns of `design`."""
    return float(ex.rss([ex.column(cols[c]) for c in design], ex.column(y)))


# ---------------------------------------------------------------------------------------
# The reference itself, against general libraries on well-conditioned data.


def test_exact_reference_agrees_with_numpy_and_statsmodels() -> None:
    """The rational helpers give what numpy and statsmodels give where float64 is ample."""
    rng = np.random.default_rng(7)
    n = 40
    Z = rng.normal(size=(n, 4))
    Z[:, 1] += 0.5 * Z[:, 0]
    y = rng.normal(size=n)
    cols = ex.columns_of(Z)
    Xc = sm.add_constant(Z)
    v = ex.vifs(cols)
    for j in range(4):  # reference: statsmodels variance_inflation_factor with a constant
        assert rel_err(float(v[j] or 0), variance_inflation_factor(Xc, j + 1)) < 1e-12
    ref = np.linalg.lstsq(Xc, y, rcond=None)[0]  # reference: numpy lstsq
    rss = float(ex.rss(cols + [ex.ones(n)], ex.column(y)))
    assert rel_err(rss, float(np.sum((y - Xc @ ref) ** 2))) < 1e-12
    C = np.corrcoef(Z.T)  # reference: Fox & Monette's formula on numpy determinants
    g, o = [0, 1], [2, 3]
    fm = np.linalg.det(C[np.ix_(g, g)]) * np.linalg.det(C[np.ix_(o, o)]) / np.linalg.det(C)
    assert rel_err(float(ex.gvif(cols, g)), fm) < 1e-12
    Zi = np.round(Z * 8)  # integers: the planted sum is exact in float64
    Zd = np.column_stack([Zi, Zi[:, 0] + Zi[:, 1]])
    assert ex.rank(ex.columns_of(Zd)) == 4 == np.linalg.matrix_rank(Zd)
    mn = np.array([float(b) for b in ex.min_norm(ex.columns_of(Zd), ex.column(y))])
    pinv = np.linalg.pinv(Zd) @ y  # reference: numpy pseudo-inverse (well conditioned here)
    assert np.linalg.norm(mn - pinv) <= 1e-12 * np.linalg.norm(pinv)


# ---------------------------------------------------------------------------------------
# a. offset timestamp


def timestamp_case(seed: int) -> tuple[dict[str, np.ndarray], np.ndarray]:
    rng = np.random.default_rng(seed)
    n = 40
    hours = rng.uniform(0, 100, n)
    temp = rng.normal(20, 5, n)
    cols = {INT: np.ones(n), "stamp": 1.7e9 + 3600 * hours, "hours": hours, "temp": temp}
    y = 3 + 0.25 * hours - 0.4 * temp + rng.normal(size=n)
    return cols, y


@pytest.mark.parametrize("seed", SEEDS)
@pytest.mark.parametrize("intercept_too", [False, True])
def test_offset_timestamp(seed: int, intercept_too: bool) -> None:
    """stamp = 1.7e9 + 3600·hours: rank 3 of 4, one equation on stamp, hours, intercept."""
    cols, y = timestamp_case(seed)
    names = list(cols)
    # reference: numpy matrix_rank on the unit-length X (the documented rank rule)
    assert numpy_rank(stack(cols, names)) == 3
    want_vif = exact_vifs(cols, ["hours", "temp"])["temp"]  # exact rational reference
    want_rss = exact_rss(cols, [INT, "hours", "temp"], y)  # exact rational reference

    def check(order: list[str]) -> None:
        d = run(cols, order, y)
        check_rank_counts(d)
        assert d.rank == 3, d.rank
        assert len(d.dependencies) == 1, [x["equation"] for x in d.dependencies]
        dep = d.dependencies[0]
        assert support(dep) == {"stamp", "hours", INT}, dep["equation"]
        assert d.vif.get("stamp", 0.0) is None and d.vif.get("hours", 0.0) is None, d.vif
        assert d.vif.get(INT) is None, d.vif  # absent, or None when it is aliased
        assert rel_err(d.vif.get("temp"), want_vif) < 1e-9, (d.vif.get("temp"), want_vif)
        assert d.fit is not None
        assert rel_err(d.fit["rss"], want_rss) < 1e-9, (d.fit["rss"], want_rss)
        check_dependency_fields(d)

    over_orders(orders(names, intercept_too=intercept_too, limit=24, seed=seed), check)


# ---------------------------------------------------------------------------------------
# b. affine pair with offset


def affine_case(seed: int) -> tuple[dict[str, np.ndarray], np.ndarray]:
    rng = np.random.default_rng(100 + seed)
    n = 15
    temp_c = rng.normal(18, 6, n)
    a = rng.normal(size=n)
    b = a + 0.5 * rng.normal(size=n)
    c = a + b + 0.5 * rng.normal(size=n)
    cols = {INT: np.ones(n), "temp_c": temp_c, "temp_k": temp_c + 273.15,
            "a": a, "b": b, "c": c}
    y = 1 + 0.1 * temp_c + a - b + 0.5 * c + rng.normal(size=n)
    return cols, y


@pytest.mark.parametrize("seed", SEEDS)
@pytest.mark.parametrize("intercept_too", [False, True])
def test_affine_pair_with_offset(seed: int, intercept_too: bool) -> None:
    """temp_k = temp_c + 273.15 beside three correlated predictors."""
    cols, y = affine_case(seed)
    names = list(cols)
    assert numpy_rank(stack(cols, names)) == 5  # reference: numpy matrix_rank, unit length
    want = exact_vifs(cols, ["temp_c", "a", "b", "c"])  # exact rational reference
    want_rss = exact_rss(cols, [INT, "temp_c", "a", "b", "c"], y)  # exact rational reference

    def check(order: list[str]) -> None:
        d = run(cols, order, y)
        check_rank_counts(d)
        assert d.rank == 5, d.rank
        assert [support(x) for x in d.dependencies] == [{"temp_c", "temp_k", INT}], [
            x["equation"] for x in d.dependencies]
        assert d.vif.get("temp_c", 0.0) is None and d.vif.get("temp_k", 0.0) is None, d.vif
        for c in ("a", "b", "c"):
            assert rel_err(d.vif.get(c), want[c]) < 1e-9, (c, d.vif.get(c), want[c])
        assert d.fit is not None
        assert rel_err(d.fit["rss"], want_rss) < 1e-9, (d.fit["rss"], want_rss)
        check_dependency_fields(d)

    over_orders(orders(names, intercept_too=intercept_too, limit=60, seed=seed), check)


# ---------------------------------------------------------------------------------------
# c. steady part of a total


def total_case(seed: int) -> tuple[dict[str, np.ndarray], np.ndarray]:
    rng = np.random.default_rng(200 + seed)
    n = 36
    payload = 200 + 50 * rng.normal(size=n)
    tare = 1500 + rng.uniform(-1e-4, 1e-4, n)
    z = rng.normal(size=n)
    codes = np.arange(n) % 3
    rng.shuffle(codes)
    cols = {INT: np.ones(n), "payload": payload, "tare": tare, "total": payload + tare,
            "z": z, "g[1]": (codes == 1).astype(float), "g[2]": (codes == 2).astype(float)}
    y = 2 + 0.01 * payload + z + 0.5 * cols["g[1]"] + rng.normal(size=n)
    return cols, y


@pytest.mark.parametrize("seed", SEEDS)
@pytest.mark.parametrize("intercept_too", [False, True])
def test_steady_part_of_a_total(seed: int, intercept_too: bool) -> None:
    """total = payload + tare with tare = 1500 ± 1e-4, beside z and a 3-level categorical.

    Tolerance 1e-8 on VIF/GVIF: where the basis keeps total and payload, tare's direction
    is carried by the stored total, rounded by ulp(1700)/2 ≈ 1e-13 per row against tare's
    spread of 1e-4, so the exact values of the equally valid bases differ by about 2e-9."""
    cols, y = total_case(seed)
    names = list(cols)
    assert numpy_rank(stack(cols, names)) == 6  # reference: numpy matrix_rank, unit length
    design = ["payload", "tare", "z", "g[1]", "g[2]"]  # the basis predictors (total left out)
    want = exact_vifs(cols, design)  # exact rational reference
    preds = [ex.column(cols[c]) for c in design]
    want_g = float(ex.gvif(preds, [3, 4]))  # exact Fox & Monette (1992) determinant formula
    want_rss = exact_rss(cols, [INT, *design], y)  # exact rational reference
    groups = {"g": ["g[1]", "g[2]"]}

    def check(order: list[str]) -> None:
        d = run(cols, order, y, groups=groups)
        check_rank_counts(d)
        assert d.rank == 6, d.rank
        assert [support(x) for x in d.dependencies] == [{"total", "payload", "tare"}], [
            x["equation"] for x in d.dependencies]
        for c in ("z", "g[1]", "g[2]"):
            assert rel_err(d.vif.get(c), want[c]) < 1e-8, (c, d.vif.get(c), want[c])
        got_g = d.gvif["g"]["gvif"]
        assert rel_err(got_g, want_g) < 1e-8, (got_g, want_g)
        assert d.fit is not None
        assert rel_err(d.fit["rss"], want_rss) < 1e-9, (d.fit["rss"], want_rss)
        check_dependency_fields(d)

    over_orders(orders(names, intercept_too=intercept_too, limit=40, seed=seed), check)


# ---------------------------------------------------------------------------------------
# d. copied column with a small coefficient of variation


def copy_case(seed: int) -> tuple[dict[str, np.ndarray], np.ndarray]:
    rng = np.random.default_rng(300 + seed)
    n = 40
    x = 1000 + 0.1 * rng.normal(size=n)
    z = rng.normal(size=n)
    cols = {INT: np.ones(n), "x": x, "x_copy": x.copy(), "z": z}
    y = 5 + 2 * (x - 1000) + z + rng.normal(size=n)
    return cols, y


def bkw_table(X: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Condition indices η_k = d_max/d_k and variance-decomposition proportions π[k, j] of
    the unit-length X (Belsley, Kuh & Welsch 1980 §3.2, eqs. 3.10–3.12), from numpy's SVD."""
    _, s, Vt = np.linalg.svd(unit_length(X), full_matrices=False)
    phi = Vt.T**2 / s[None, :] ** 2
    return s[0] / s, (phi / phi.sum(axis=1, keepdims=True)).T


@pytest.mark.parametrize("seed", SEEDS)
@pytest.mark.parametrize("intercept_too", [False, True])
def test_copied_column(seed: int, intercept_too: bool) -> None:
    """x_copy = x (exactly), x = 1000 + 0.1·noise: one exact dimension, one near one."""
    cols, y = copy_case(seed)
    names = list(cols)
    assert ex.rank(ex.columns_of(stack(cols, names))) == 3  # exact rational reference
    # reference: BKW's table from numpy's SVD of the unit-length basis design [1, x, z]
    # (x and x_copy hold the same numbers): the intercept–x dimension, well above 30
    eta, pi = bkw_table(stack(cols, [INT, "x", "z"]))
    k = int(np.argmax(eta))
    assert eta[k] > 300 and pi[k, 0] > 0.5 and pi[k, 1] > 0.5 and pi[k, 2] < 0.5
    want_z = exact_vifs(cols, ["x", "z"])["z"]  # exact rational reference

    def check(order: list[str]) -> None:
        d: Diagnosis = run(cols, order, y)
        check_rank_counts(d)
        assert d.rank == 3, d.rank
        assert [support(x) for x in d.dependencies] == [{"x", "x_copy"}], [
            x["equation"] for x in d.dependencies]
        assert rel_err(d.vif.get("z"), want_z) < 1e-9, (d.vif.get("z"), want_z)
        near = [e for e in d.near_dependencies if not e["exact"]]
        assert not [e for e in near if "z" in e["columns"]], near
        hit = [e for e in near if (e["index"] or 0) > 30
               and e["proportions"].get(INT, 0) > 0.5
               and max(e["proportions"].get("x", 0), e["proportions"].get("x_copy", 0)) > 0.5]
        assert hit, f"no intercept–x near-dependency flagged: {near}"
        e = hit[0]
        px = e["proportions"].get("x", e["proportions"].get("x_copy"))
        assert rel_err(e["index"], eta[k]) < 1e-6, (e["index"], eta[k])
        assert rel_err(e["proportions"][INT], pi[k, 0]) < 1e-6, (e["proportions"], pi[k])
        assert rel_err(px, pi[k, 1]) < 1e-6, (e["proportions"], pi[k])
        dims = d.exact_dimensions  # type: ignore[attr-defined]
        assert len(dims) == 1, dims
        assert set(dims[0]["columns"]) == {"x", "x_copy"}, dims
        assert "x" in dims[0]["equation"] and "x_copy" in dims[0]["equation"], dims
        check_dependency_fields(d)

    over_orders(orders(names, intercept_too=intercept_too, limit=24, seed=seed), check)


# ---------------------------------------------------------------------------------------
# e. mixed scales and the minimum-norm solution


def mixed_case(seed: int, variant: str) -> tuple[dict[str, np.ndarray], np.ndarray, list]:
    """Columns at 1e8 and 1e-8 and a dependency across them, plus its intended exact column.

    mix = big + small itself cannot be stored: 1e8 + 1e-8 needs 54 significant bits, so
    float64 keeps big and a rounding of small to steps of 1.5e-8, and no exact reference
    exists for what the stored numbers mean. The two variants keep both terms at one scale
    (mix = big + 1e16·small at 1e8, mix = 1e-16·big + small at 1e-8): the stored mix is
    then the intended one up to eps relative, and the raw-unit null vector still mixes
    magnitudes 1 and 1e16.
    """
    rng = np.random.default_rng(400 + seed)
    n = 30
    big = 3e8 + 1e8 * rng.normal(size=n)
    small = 1e-8 * rng.normal(size=n)
    mid = rng.normal(size=n)
    y = 1 + 2e-8 * big + 3e7 * small + mid + rng.normal(size=n)
    if variant == "hi":
        mix = big + 1e16 * small
        intended = [Fraction(float(a)) + Fraction(1e16) * Fraction(float(b))
                    for a, b in zip(big, small, strict=True)]
    else:
        mix = 1e-16 * big + small
        intended = [Fraction(1e-16) * Fraction(float(a)) + Fraction(float(b))
                    for a, b in zip(big, small, strict=True)]
    cols = {INT: np.ones(n), "big": big, "small": small, "mid": mid, "mix": mix}
    return cols, y, intended


@pytest.mark.parametrize("seed", SEEDS)
@pytest.mark.parametrize("variant", ["hi", "lo"])
def test_mixed_scales_minimum_norm(seed: int, variant: str) -> None:
    """fit['min_norm'] is X⁺y in the original units, whatever the column order."""
    cols, y, intended = mixed_case(seed, variant)
    names = list(cols)
    assert numpy_rank(stack(cols, names)) == 4  # reference: numpy matrix_rank, unit length
    # exact rational reference: X⁺y of the intended matrix (mix = its exact combination)
    exact_cols = [ex.column(cols[c]) for c in names[:-1]] + [intended]
    ref = dict(zip(names, (float(b) for b in ex.min_norm(exact_cols, ex.column(y))),
                   strict=True))
    norm = float(np.linalg.norm(list(ref.values())))

    def check(order: list[str]) -> None:
        d = run(cols, order, y)
        check_rank_counts(d)
        assert d.rank == 4, d.rank
        assert [support(x) for x in d.dependencies] == [{"big", "small", "mix"}], [
            x["equation"] for x in d.dependencies]
        assert d.fit is not None
        got = d.fit["min_norm"]
        diff = float(np.linalg.norm([got[c] - ref[c] for c in names]))
        assert diff <= 1e-9 * norm, ({c: (got[c], ref[c]) for c in names}, diff / norm)
        for c in names:
            if abs(ref[c]) > 1e-6 * norm:
                assert np.sign(got[c]) == np.sign(ref[c]), (c, got[c], ref[c])
        check_dependency_fields(d)

    over_orders(orders(names, intercept_too=True, limit=120, seed=seed), check)


# ---------------------------------------------------------------------------------------
# f. a caller's tolerance


@pytest.mark.parametrize("seed", SEEDS)
def test_given_tolerance_aliases_near_copy(seed: int) -> None:
    """tol=1e-8 with x_near = x·(1 + 1e-10·noise): aliased, named, VIF None."""
    rng = np.random.default_rng(500 + seed)
    n = 40
    x = rng.normal(5, 2, n)
    cols = {INT: np.ones(n), "x": x, "x_near": x * (1 + 1e-10 * rng.normal(size=n)),
            "z": rng.normal(size=n)}
    y = 1 + x + cols["z"] + rng.normal(size=n)
    names = list(cols)
    X = stack(cols, names)
    assert numpy_rank(X, tol=1e-8) == 3  # reference: numpy matrix_rank at the given tol
    assert numpy_rank(X) == 4  # and full rank at the default rule: tol decides here
    want_z = exact_vifs(cols, ["x", "z"])["z"]  # exact rational reference, x_near left out

    def check(order: list[str]) -> None:
        d = run(cols, order, y, tol=1e-8)
        check_rank_counts(d)
        assert d.rank == 3, d.rank
        assert len(d.dependencies) == 1, [x["equation"] for x in d.dependencies]
        s = support(d.dependencies[0])
        assert {"x", "x_near"} <= s <= {"x", "x_near", INT}, d.dependencies[0]["equation"]
        assert d.vif.get("x", 0.0) is None and d.vif.get("x_near", 0.0) is None, d.vif
        check_vif_none_iff_involved(d)
        assert rel_err(d.vif.get("z"), want_z) < 1e-9, (d.vif.get("z"), want_z)
        check_dependency_fields(d)

    over_orders(orders(names, intercept_too=False, limit=6, seed=seed), check)


# ---------------------------------------------------------------------------------------
# g. constant and zero columns beside an intercept


@pytest.mark.parametrize("seed", SEEDS)
@pytest.mark.parametrize("intercept_too", [False, True])
def test_constant_and_zero_columns(seed: int, intercept_too: bool) -> None:
    """five = 5.0 and nil = 0.0 beside (intercept): each aliased, each VIF None."""
    rng = np.random.default_rng(600 + seed)
    n = 30
    cols = {INT: np.ones(n), "five": np.full(n, 5.0), "nil": np.zeros(n),
            "u": rng.normal(size=n), "v": rng.normal(size=n)}
    y = 1 + cols["u"] + rng.normal(size=n)
    names = list(cols)
    assert ex.rank(ex.columns_of(stack(cols, names))) == 3  # exact rational reference
    want = exact_vifs(cols, ["u", "v"])  # exact rational reference
    keep = [INT] if intercept_too else None  # the intercept stays the constant

    def check(order: list[str]) -> None:
        d = run(cols, order, y, keep=keep)
        check_rank_counts(d)
        assert d.rank == 3, d.rank
        inv = [support(x) for x in d.dependencies]
        assert any("five" in s for s in inv) and any("nil" in s for s in inv), inv
        assert "five" in d.vif and d.vif["five"] is None, d.vif
        assert "nil" in d.vif and d.vif["nil"] is None, d.vif
        assert INT not in d.vif, d.vif
        check_vif_none_iff_involved(d)
        for c in ("u", "v"):
            assert rel_err(d.vif.get(c), want[c]) < 1e-9, (c, d.vif.get(c), want[c])
        check_dependency_fields(d)

    over_orders(orders(names, intercept_too=intercept_too, limit=120, seed=seed), check)


# ---------------------------------------------------------------------------------------
# h. a column of magnitude 1e-200


@pytest.mark.parametrize("seed", SEEDS)
def test_tiny_column_is_a_column(seed: int) -> None:
    """tiny = 1e-200·noise is independent: counted in the rank, in no equation, not zero."""
    rng = np.random.default_rng(700 + seed)
    n = 30
    cols = {INT: np.ones(n), "tiny": 1e-200 * rng.normal(1, 1, n),
            "u": rng.normal(size=n), "v": rng.normal(size=n)}
    y = 1 + cols["u"] + 1e200 * cols["tiny"] + rng.normal(size=n)
    names = list(cols)
    X = stack(cols, names)
    assert ex.rank(ex.columns_of(X)) == 4  # exact rational reference
    assert numpy_rank(X) == 4  # reference: numpy matrix_rank on the unit-length X
    want = exact_vifs(cols, ["tiny", "u", "v"])  # exact rational reference

    def check(order: list[str]) -> None:
        d = run(cols, order, y)
        check_rank_counts(d)
        assert d.rank == 4 and "tiny" in d.basis, (d.rank, d.basis)
        assert d.dependencies == [], [x["equation"] for x in d.dependencies]
        assert not [s for s in d.notes if "tiny" in s and "zero" in s.lower()], d.notes
        for c in ("tiny", "u", "v"):
            assert rel_err(d.vif.get(c), want[c]) < 1e-9, (c, d.vif.get(c), want[c])
        check_dependency_fields(d)

    over_orders(orders(names, intercept_too=True, limit=24, seed=seed), check)


# ---------------------------------------------------------------------------------------
# i. how coefficients are shown


@pytest.mark.parametrize("seed", SEEDS)
def test_equation_coefficients_shown_short(seed: int) -> None:
    """m = 1609.344·mi, hp = 745.69987·w, x3 = x1/3: shown as written, not as fractions."""
    rng = np.random.default_rng(800 + seed)
    n = 30
    mi, w, x1 = rng.uniform(1, 50, n), rng.uniform(10, 400, n), rng.normal(size=n)
    cols = {INT: np.ones(n), "mi": mi, "m": 1609.344 * mi, "w": w, "hp": 745.69987 * w,
            "x1": x1, "x3": x1 / 3}
    names = list(cols)
    # reference: the planted coefficients (decimal literals; 1/3 by construction)
    want = {"m": ("mi", 1609.344, "1609.344"), "hp": ("w", 745.69987, "745.69987"),
            "x3": ("x1", 1 / 3, "1/3")}

    def check(order: list[str]) -> None:
        d = run(cols, order, None, keep=["mi", "w", "x1"])
        check_rank_counts(d)
        by = {x["column"]: x for x in d.dependencies}
        assert set(by) == set(want), list(by)
        for col, (base, coef, text) in want.items():
            dep = by[col]
            assert set(dep["combination"]) == {base}, dep["equation"]
            assert rel_err(dep["combination"][base], coef) < 1e-12, dep["combination"]
            assert dep["shown"][base] == text, (col, dep["shown"])
            assert text in dep["equation"], dep["equation"]
        check_dependency_fields(d)

    over_orders(orders(names, intercept_too=True, limit=40, seed=seed), check)


# ---------------------------------------------------------------------------------------
# The constant only implicitly in the span: every level of a categorical, no intercept.


@pytest.mark.parametrize("seed", SEEDS)
def test_constant_carried_by_levels(seed: int) -> None:
    """h[0] + h[1] + h[2] = 1 and no intercept column: one level carries the constant, has
    no VIF and is listed in vif_absent; the others' VIFs are the centered ones of the design
    with that level replaced by the constant."""
    rng = np.random.default_rng(900 + seed)
    n = 45
    codes = np.arange(n) % 3
    rng.shuffle(codes)
    z = rng.normal(size=n)
    cols = {f"h[{k}]": (codes == k).astype(float) for k in range(3)}
    cols |= {"z": z, "w": 0.6 * z + rng.normal(size=n)}
    y = cols["h[1]"] + z + rng.normal(size=n)
    names = list(cols)
    assert ex.rank(ex.columns_of(stack(cols, names))) == 5  # exact rational reference

    def check(order: list[str]) -> None:
        d = run(cols, order, y)
        check_rank_counts(d)
        assert d.rank == 5 and d.dependencies == [], d.dependencies
        absent = [c for c in names if c not in d.vif]
        assert len(absent) == 1 and absent[0].startswith("h["), d.vif
        carrier = absent[0]
        reasons = d.vif_absent  # type: ignore[attr-defined]
        assert set(reasons) == {carrier} and isinstance(reasons[carrier], str), reasons
        rest = [c for c in names if c != carrier]
        want = exact_vifs(cols, rest)  # exact rational reference, constant in the carrier's place
        for c in rest:
            assert rel_err(d.vif.get(c), want[c]) < 1e-9, (c, d.vif.get(c), want[c])
        check_dependency_fields(d)

    over_orders(orders(names, intercept_too=True, limit=120, seed=seed), check)
