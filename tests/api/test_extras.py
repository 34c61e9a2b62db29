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
    assert result.to_dict()["extras"] == ["spearman", "order"]


def test_none_asked_leaves_them_none(frame: pd.DataFrame) -> None:
    result = rankscope.inspect(frame, "y", extras=())
    corr = result.diagnosis.correlations
    assert corr["spearman"] is None and corr["order"] is None
    doc = result.to_dict()
    assert doc["extras"] == []
    schema = json.loads(SCHEMA.read_text(encoding="utf-8"))
    assert not list(Draft202012Validator(schema).iter_errors(doc))


def test_unknown_extra_is_refused(frame: pd.DataFrame) -> None:
    with pytest.raises(rankscope.InputError, match="kendall"):
        rankscope.inspect(frame, "y", extras=("kendall",))
