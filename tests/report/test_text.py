"""The terminal report: order of sections, what infinite and aliased look like, numbers shown.

Built from small hand-made designs and from the demo table through the command.
"""

from __future__ import annotations

import numpy as np
import pytest

from rankscope.core.diagnosis import diagnose
from rankscope.design.design import INTERCEPT, Design
from rankscope.report.text import num, render_text
from tests.cli.runner import DEMO, REDUCED, run

SECTIONS = [
    "Exact linear dependencies",
    "Rank and conditioning",
    "Condition indices and variance-decomposition proportions",
    "Variance inflation",
    "Least-squares fit of",
    "Before acting on these numbers",
]


def make(X: np.ndarray, names: list[str], y: np.ndarray | None,
         groups: dict[str, list[str]] | None = None) -> tuple[dict, Design]:
    des = Design(X=X, columns=names, y=y, response=None if y is None else "y",
                 groups=groups or {}, rows_total=len(X), rows_used=len(X))
    d = diagnose(X, names, y, response=des.response, groups=des.groups).to_dict()
    return d, des


@pytest.fixture(scope="module")
def demo_full() -> str:
    r = run("check", DEMO, "--response", "energy_kwh", "--categorical", "site", "--all-levels")
    assert r.code == 0, r.err
    return r.out


def test_sections_in_order(demo_full: str) -> None:
    # Reference: the section order documented in docs/cli.md (dependencies first, cautions
    # last).
    at = [demo_full.index(s) for s in SECTIONS]
    assert at == sorted(at)


def test_demo_report_names_dependencies_infinite_vif_and_aliasing(demo_full: str) -> None:
    # Reference: the planted relations (definitions in demo_data/README.md).
    assert "goods_in_kg = 0.45359237·goods_in_lb" in demo_full
    assert "outdoor_temp_f = 32·(intercept) + 1.8·outdoor_temp_c" in demo_full
    assert "pallets_moved = pallets_in + pallets_out" in demo_full
    # Reference: VIF is infinite for an exactly dependent column (definition: R² = 1).
    vif_lines = [ln for ln in demo_full.splitlines() if ln.strip().startswith("goods_in_kg")]
    assert any("∞" in ln and "exact dependency" in ln for ln in vif_lines)
    assert any("aliased" in ln for ln in vif_lines)
    assert "β[goods_in_lb] + 0.45359237·β[goods_in_kg]" in demo_full
    assert "site    4" in demo_full  # the GVIF row of the site group, df 4


def test_textbook_line_fit() -> None:
    # Reference: least squares by hand for x = 1..5, y = 2, 4, 5, 4, 5: x̄ = 3, ȳ = 4,
    # Sxy = 6, Sxx = 10, so slope 0.6, intercept 2.2, SST = 6, SSR = 3.6, R² = 0.6
    # (textbook formulas b = Sxy/Sxx, a = ȳ − b·x̄).
    x = np.arange(1.0, 6.0)
    y = np.array([2.0, 4.0, 5.0, 4.0, 5.0])
    d, des = make(np.column_stack([np.ones(5), x]), [INTERCEPT, "x"], y)
    text = render_text(d, des, source="line.csv")
    fit_rows = {ln.split()[0]: ln.split() for ln in text.splitlines()
                if ln.strip().startswith(("(intercept)", "x "))}
    assert float(fit_rows["(intercept)"][1]) == pytest.approx(2.2, rel=1e-6)
    assert float(fit_rows["x"][1]) == pytest.approx(0.6, rel=1e-6)
    assert "R² 0.6 (centered)" in text
    assert "Exact linear dependencies: none" in text
    assert "5 of 5 used" in text


def test_no_response_has_no_fit_and_no_causal_caution() -> None:
    rng = np.random.default_rng(3)
    X = np.column_stack([np.ones(20), rng.normal(size=20), rng.normal(size=20)])
    d, des = make(X, [INTERCEPT, "a", "b"], None)
    text = render_text(d, des)
    assert "no response" in text
    assert "Least-squares fit" not in text
    assert "not a causal effect" not in text


def test_flagged_near_dependency_is_marked() -> None:
    r = run("check", DEMO, "--response", "energy_kwh", *REDUCED)
    assert r.code == 0
    # Reference: door_openings ≈ 0.42·(pallets_in + pallets_out) in the file, and a
    # condition index above 30 with shares above 0.5 is the usual flag (common practice).
    flagged = [ln for ln in r.out.splitlines() if "door_openings" in ln and "index" in ln]
    assert flagged and "pallets_in" in flagged[0] and "pallets_out" in flagged[0]
    assert "!" in r.out and "*" in r.out


def test_number_format() -> None:
    # Reference: Python's own float formatting (format spec 'g').
    assert num(None) == "—"
    assert num(float("inf")) == "∞"
    assert num(0.0) == "0"
    assert num(1234.5678, 6) == "1234.57"
    assert num(4709234.0) == "4709234"
    assert num(1.5e-9, 3) == "1.5e-09"


def test_wide_design_shows_the_dimensions_that_matter() -> None:
    """Above WIDE_COLUMNS columns the index table keeps the most ill-conditioned and the
    flagged dimensions; a planted near-dependency (x3 ≈ x1 + x2, random data) stays in view.
    Reference: the planted relation's columns carry the flagged shares."""
    rng = np.random.default_rng(8)
    n, p = 400, 60
    X = rng.standard_normal((n, p))
    X[:, 3] = X[:, 1] + X[:, 2] + 1e-4 * rng.standard_normal(n)
    names = [f"x{j}" for j in range(p)]
    d, des = make(np.column_stack([np.ones(n), X]), [INTERCEPT, *names], None)
    text = render_text(d, des)
    assert "dimensions shown: the most ill-conditioned and the flagged ones" in text
    table = text.split("Condition indices and variance-decomposition proportions")[1]
    header = [ln for ln in table.splitlines() if ln.strip().startswith("dimension ")]
    assert len(header) == 1 and "#1!" in header[0]  # one block of columns, flagged first
    row = next(ln for ln in table.splitlines() if ln.strip().startswith("x3 "))
    assert "*" in row
