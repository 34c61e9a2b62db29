"""Which statistical cautions a diagnosis brings up, on small designs with known structure.

Designs are built by hand here; the numbers come from rankscope.core.diagnose.
"""

from __future__ import annotations

import numpy as np

from rankscope.core.diagnosis import diagnose
from rankscope.report.cautions import VIF_MARK, choose_cautions

RNG = np.random.default_rng(7)
N = 60


def keys(d: dict) -> list[str]:
    return [c.key for c in choose_cautions(d)]


def design(*cols: np.ndarray) -> np.ndarray:
    return np.column_stack([np.ones(N), *cols])


def test_orthogonal_design_only_warns_about_causality() -> None:
    # Reference: centered columns that are orthogonal have VIF 1 (definition: R² = 0).
    x1 = np.tile([-1.0, 1.0], N // 2)
    x2 = np.repeat([-1.0, 1.0], N // 2)
    assert abs(x1 @ x2) == 0.0
    y = RNG.normal(size=N)
    d = diagnose(design(x1, x2), ["(intercept)", "a", "b"], y).to_dict()
    assert keys(d) == ["not_causal"]


def test_no_response_no_fit_cautions() -> None:
    x1 = np.tile([-1.0, 1.0], N // 2)
    d = diagnose(design(x1), ["(intercept)", "a"]).to_dict()
    assert keys(d) == []


def test_exact_dependency_brings_aliasing_with_its_combination() -> None:
    x1 = RNG.normal(size=N)
    x2 = 2.0 * x1  # exact by construction
    y = x1 + RNG.normal(size=N)
    d = diagnose(design(x1, x2), ["(intercept)", "x1", "x2"], y).to_dict()
    found = {c.key: c for c in choose_cautions(d)}
    assert {"omitted_variable", "not_causal", "aliasing"} <= set(found)
    # Reference: with x2 = 2·x1, X·β = x1·(β1 + 2·β2), so the estimate for x1 estimates
    # β[x1] + 2·β[x2] (definition of aliasing; Searle, Linear Models, 1971, §5.2).
    assert "β[x1] + 2·β[x2]" in found["aliasing"].text
    assert "x2" in found["aliasing"].text.split(":")[0]


def test_near_collinearity_brings_sample_and_threshold_cautions() -> None:
    x1 = RNG.normal(size=N)
    x2 = x1 + 0.05 * RNG.normal(size=N)
    y = x1 + RNG.normal(size=N)
    d = diagnose(design(x1, x2), ["(intercept)", "x1", "x2"], y).to_dict()
    # Reference: corr(x1, x2) ≈ 0.999 here (numpy), so VIF = 1/(1 − r²) is far above 10.
    r = np.corrcoef(x1, x2)[0, 1]
    assert 1 / (1 - r * r) > VIF_MARK
    found = {c.key: c for c in choose_cautions(d)}
    assert {"sample_property", "thresholds", "omitted_variable", "not_causal"} <= set(found)
    assert "aliasing" not in found
    # Reference: VIF 10 and condition index 30 are common practice, and the text says so.
    assert "common practice" in found["thresholds"].text
    assert "x1" in found["sample_property"].text and "x2" in found["sample_property"].text


def test_cautions_are_plain_dicts_for_the_web() -> None:
    x1 = RNG.normal(size=N)
    d = diagnose(design(x1, 3 * x1), ["(intercept)", "x1", "x2"], x1).to_dict()
    for c in choose_cautions(d):
        assert set(c.to_dict()) == {"key", "title", "text"}
        assert all(isinstance(v, str) and v for v in c.to_dict().values())
