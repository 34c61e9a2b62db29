"""`inspect(extras=...)`: both extras by default (the notebook report shows them), none when
asked for none, each left out None in the correlations and listed in the document's extras.

References: scipy.stats.spearmanr on the same columns; docs/diagnosis.schema.json (checked by
jsonschema).
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from jsonschema import Draft202012Validator
from scipy import stats

import rankscope
from tests.cli.runner import SCHEMA


@pytest.fixture(scope="module")
def frame() -> pd.DataFrame:
    rng = np.random.default_rng(21)
    n = 200
    a = rng.standard_normal(n)
    out = pd.DataFrame({"a": a, "a_exp": np.exp(a), "b": rng.integers(0, 4, n).astype(float),
                        "c": rng.standard_normal(n)})
    out["y"] = out["a"] + out["c"] + rng.standard_normal(n)
    return out


def test_default_computes_both(frame: pd.DataFrame) -> None:
    result = rankscope.inspect(frame, "y")
    corr = result.diagnosis.correlations
    expected = stats.spearmanr(frame[corr["columns"]].to_numpy()).statistic
    np.testing.assert_allclose(np.array(corr["spearman"]), expected, rtol=0, atol=1e-12)
    assert sorted(corr["order"]) == list(range(len(corr["columns"])))
    assert result.to_dict()["extras"] == ["spearman", "order", "proportions", "spectra"]


def test_none_asked_leaves_them_none(frame: pd.DataFrame) -> None:
    result = rankscope.inspect(frame, "y", extras=())
    corr = result.diagnosis.correlations
    assert corr["spearman"] is None and corr["order"] is None
    doc = result.to_dict()
    assert doc["extras"] == []
    schema = json.loads(SCHEMA.read_text(encoding="utf-8"))
    assert not list(Draft202012Validator(schema).iter_errors(doc))


def test_a_wide_design_is_complete_by_default_and_lean_when_asked() -> None:
    """Past 200 columns the proportions of low index and a deficient design's raw and
    centred spectra are extras (docs/json.md); the document validates either way."""
    rng = np.random.default_rng(4)
    X = rng.standard_normal((600, 230))
    X[:, 229] = X[:, 0] + X[:, 1]
    X[:, 228] = X[:, 2] + 1e-4 * rng.standard_normal(600)
    wide = pd.DataFrame(X, columns=[f"x{j:03d}" for j in range(230)])
    wide["y"] = X[:, 3] + rng.standard_normal(600)
    full = rankscope.inspect(wide, "y")
    lean = rankscope.inspect(wide, "y", extras=())
    assert all(r is not None for r in full.diagnosis.variance_proportions)
    assert full.diagnosis.singular_values["raw"] is not None
    rows = lean.diagnosis.variance_proportions
    assert 0 < sum(r is not None for r in rows) < len(rows) // 4
    assert lean.diagnosis.singular_values["raw"] is None
    # reference: the complete run's numbers on the rows the lean one gives
    for r_lean, r_full in zip(rows, full.diagnosis.variance_proportions, strict=True):
        if r_lean is not None:
            assert np.allclose(list(r_lean.values()), list(r_full.values()), atol=1e-8)
    frame = lean.index_frame()
    assert frame.shape[0] == len(rows) and frame.iloc[0].isna().any()
    schema = json.loads(SCHEMA.read_text(encoding="utf-8"))
    for doc in (full.to_dict(), lean.to_dict()):
        assert not list(Draft202012Validator(schema).iter_errors(doc))


def test_unknown_extra_is_refused(frame: pd.DataFrame) -> None:
    with pytest.raises(rankscope.InputError, match="kendall"):
        rankscope.inspect(frame, "y", extras=("kendall",))
