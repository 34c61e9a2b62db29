"""Remedy previews equal the analysis after the change is applied.

Reference for every check: the same recipe with the remedy's steps appended, replayed on the
rows and analysed from scratch (rankscope.design + rankscope.core.diagnose), so the preview,
computed on the factor alone, is held to what the user would see after clicking it.
Centering is also held to statsmodels' auxiliary regressions on the centered data.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from statsmodels.stats.outliers_influence import variance_inflation_factor

from rankscope.core.diagnosis import diagnose_factor
from rankscope.core.factor import factorize
from rankscope.core.preview import summarize
from rankscope.design.recipe import Recipe, build_design
from rankscope.report.remedies import FEWEST, MOST, PREVIEW_COLUMNS, previews_allowed, remedies_of
from rankscope.tables.read import read_table

REL = 1e-9


def _table(tmp: Path, seed: int, offset: float) -> Path:
    rng = np.random.default_rng(seed)
    n = 150
    a = rng.normal(5, 2, n)
    b = rng.normal(-3, 1, n)
    x = offset + rng.normal(0, 1, n)  # far from zero with little spread when offset is big
    w = 0.7 * a + rng.normal(0, 0.05, n)  # a near pair with a
    g = rng.choice(["north", "south", "east"], n)
    y = a - b + 0.1 * x + (g == "south") + rng.normal(size=n)
    df = pd.DataFrame({"a": a, "b": b, "total": a + b, "x": x, "w": w, "g": g, "y": y})
    path = tmp / f"t{seed}.csv"
    df.to_csv(path, index=False, float_format="%.17g")
    return path


BASE = [{"step": "response", "column": "y"},
        {"step": "product", "columns": ["a", "x"], "name": "a·x"}]


def _analyse(path: Path, steps: list[dict], keep: list[str] | None = None):
    design = build_design(read_table(path), Recipe(steps))
    F = factorize(design.X, design.columns, design.y)
    d = diagnose_factor(F, response=design.response, groups=design.groups, keep=keep)
    return design, F, d


def _same(x: float | None, y: float | None, rel: float = REL) -> bool:
    if x is None or y is None:
        return x is None and y is None
    return abs(x - y) <= rel * max(abs(x), abs(y))


def _check_all(path: Path, steps: list[dict] = BASE) -> int:
    design, F, d = _analyse(path, steps)
    rows = remedies_of(d, F, design, steps, None, None).shown
    assert rows, "the design has a dependency, a near pair and a product: remedies expected"
    for r in rows:
        keep = r["keep"]
        _, _, after = _analyse(path, steps + r["steps"], keep)
        got = summarize(after, d).to_dict()
        assert got["rank"] == r["rank"] and got["columns"] == r["columns"], r["label"]
        assert set(got["infinite_vif"]) == set(r["infinite_vif"]), r["label"]
        for k in ("raw", "equilibrated", "centered"):
            assert _same(got["condition_number"][k], r["condition_number"][k]), (r["label"], k)
        top, mine = got["largest_finite_vif"], r["largest_finite_vif"]
        assert _same(None if top is None else top["vif"], None if mine is None else mine["vif"])
        if r["rank"] == r["columns"] and r["se_ratio"] is not None:
            for c, v in r["se_ratio"].items():
                assert _same(got["se_ratio"][c], v), (r["label"], c)
    return len(rows)


def test_every_remedy_preview_equals_the_applied_analysis(tmp_path: Path) -> None:
    assert _check_all(_table(tmp_path, 1, 1000.0)) >= 6


def test_previews_side_by_side_are_the_previews_in_turn(tmp_path: Path, monkeypatch) -> None:
    """A wide design previews its remedies on all cores: forced here onto a narrow one, the
    rows are those of the previews run one after the other, to the last bit, and still
    equal the applied analysis."""
    from rankscope.core import preview

    steps = BASE
    design, F, d = _analyse(_table(tmp_path, 3, 50.0), steps)
    in_turn = remedies_of(d, F, design, steps, None, None).shown
    monkeypatch.setattr(preview, "SIDE_BY_SIDE_COLUMNS", 0)
    started = []
    real = preview._pool

    def spy():
        started.append(True)
        return real()

    monkeypatch.setattr(preview, "_pool", spy)
    side_by_side = remedies_of(d, F, design, steps, None, None).shown
    assert started and len(in_turn) >= 6
    assert side_by_side == in_turn
    assert _check_all(_table(tmp_path, 3, 50.0)) == len(in_turn)


@settings(max_examples=8, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(st.integers(0, 2**31 - 1), st.sampled_from([0.0, 50.0, 1e4]))
def test_previews_hold_over_many_designs(tmp_path: Path, seed: int, offset: float) -> None:
    _check_all(_table(tmp_path, seed, offset))


def test_centering_a_product_matches_auxiliary_regressions(tmp_path: Path) -> None:
    path = _table(tmp_path, 2, 1000.0)
    design, F, d = _analyse(path, BASE)
    rows = remedies_of(d, F, design, BASE, None, None).shown
    centre = next(r for r in rows if r["label"] == "Center the inputs of a·x")
    assert centre["centering"].startswith("helps")
    # Reference: statsmodels' auxiliary regressions on the centered data, total left out
    # (the VIFs of the other columns do not depend on which level of g is the reference).
    df = pd.read_csv(path)
    ac, xc = df.a - df.a.mean(), df.x - df.x.mean()
    levels = pd.get_dummies(df.g, drop_first=True, dtype=float).to_numpy()
    X = np.column_stack([np.ones(len(df)), df.b, xc, df.w, ac, ac * xc, levels])
    # a (centered), b and total stay an exact dependency (VIF ∞); the largest finite VIF is
    # w's (the near pair with a), and the product's falls to about 1.
    assert centre["largest_finite_vif"]["column"] == "w"
    assert centre["largest_finite_vif"]["vif"] == pytest.approx(
        variance_inflation_factor(X, 3), rel=1e-8)


def test_centering_cannot_cure_a_dependency_between_variables(tmp_path: Path) -> None:
    rng = np.random.default_rng(3)
    n = 120
    u = rng.normal(size=n)
    df = pd.DataFrame({"u": 500 + u, "v": 500 + u + rng.normal(0, 0.01, n),
                       "y": rng.normal(size=n)})
    path = tmp_path / "tangled.csv"
    df.to_csv(path, index=False, float_format="%.17g")
    steps = [{"step": "response", "column": "y"}]
    design, F, d = _analyse(path, steps)
    rows = remedies_of(d, F, design, steps, None, None).shown
    verdicts = [r["centering"] for r in rows if r["kind"] == "center"]
    assert verdicts and all(v.startswith("cannot help") for v in verdicts)


def test_the_preview_budget_is_the_work_of_forty_previews_at_250_columns() -> None:
    # Each preview is one analysis of a (p, p) factor, O(p³) (Golub & Van Loan, Matrix
    # Computations, 4th ed., §8.6: the SVD's cost is cubic in the number of columns).
    assert previews_allowed(PREVIEW_COLUMNS) == MOST
    assert previews_allowed(2 * PREVIEW_COLUMNS) == MOST // 8
    assert previews_allowed(1_000) == previews_allowed(2_000) == FEWEST
    assert all(previews_allowed(p) >= previews_allowed(p + 1) for p in range(1, 1_200))


def _wide(tmp: Path) -> Path:
    rng = np.random.default_rng(11)
    n, k = 480, 400
    df = pd.DataFrame(rng.normal(size=(n, k)), columns=[f"c{i:03d}" for i in range(k)])
    df["total"] = df.c000 + df.c001  # an exact dependency: 3 drops and a keep
    for i in range(4):  # near pairs: two drops and a combine each
        df[f"twin{i}"] = df[f"c{10 + i:03d}"] + rng.normal(0, 1e-3, n)
    df["y"] = df.c000 - df.c002 + rng.normal(size=n)
    path = tmp / "wide.csv"
    df.to_csv(path, index=False, float_format="%.17g")
    return path


def test_a_wide_design_previews_the_first_remedies_and_lists_the_rest(tmp_path: Path) -> None:
    path = _wide(tmp_path)
    steps = [{"step": "response", "column": "y"}]
    design, F, d = _analyse(path, steps)
    found = remedies_of(d, F, design, steps, None, None)
    allowed = previews_allowed(F.p)
    assert FEWEST <= allowed < MOST
    assert len(found.shown) == allowed and found.unpreviewed
    # Nothing is lost: previewed and listed together are every candidate, once each.
    labels = [r["label"] for r in found.shown] + [r["label"] for r in found.unpreviewed]
    assert len(labels) == len(set(labels)) >= allowed + 1
    # The equation's own columns come first, so they are the ones previewed.
    assert {"Drop c000", "Drop c001", "Drop total"} <= {r["label"] for r in found.shown}
    for r in found.unpreviewed:
        assert set(r) == {"kind", "label", "steps", "keep"}
    # The previews that were made still equal the analysis after applying them.
    assert _check_all(path, steps) == allowed


def test_the_terminal_report_names_the_remedies_it_did_not_preview(tmp_path: Path) -> None:
    from rankscope.report.text import render_text

    path = _wide(tmp_path)
    steps = [{"step": "response", "column": "y"}]
    design, F, d = _analyse(path, steps)
    doc = remedies_of(d, F, design, steps, None, None).into(d.to_dict())
    text = " ".join(render_text(doc, design).split())
    rest = doc["remedies_not_previewed"]
    assert f"{len(rest)} more not previewed" in text
    assert rest[0]["label"] in text and "Apply, then Undo" in text
