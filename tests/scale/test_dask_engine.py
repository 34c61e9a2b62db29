"""The Dask engine on a real local cluster (two worker processes on loopback) gives the
in-memory analysis of the same rows; dask is an optional extra.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

try:
    from dask.distributed import LocalCluster
except ImportError:  # pragma: no cover - depends on the environment
    if os.environ.get("CI"):
        raise  # CI installs the test extra, which includes dask: it must run there
    pytest.skip("dask[distributed] is not installed (pip install -e '.[dask]')",
                allow_module_level=True)

from rankscope.scale.dask_engine import dask_factor, dask_stream, pieces
from rankscope.scale.stream import stream_factor
from rankscope.tables.errors import InputError
from tests.scale.stream_compare import differences, in_memory, streamed

STEPS = {
    "statistics on the factor": [
        {"step": "response", "column": "y"},
        {"step": "standardize", "column": "a"},
        {"step": "combine", "columns": ["b", "c"], "method": "first_component", "name": "bc"},
        {"step": "indicators", "column": "g", "reference": "all"},
    ],
    "center, then square": [
        {"step": "response", "column": "y"},
        {"step": "center", "column": "a"},
        {"step": "power", "column": "a (centered)", "exponent": 2, "keep": True},
    ],
}


def data(n: int = 2400) -> pd.DataFrame:
    rng = np.random.default_rng(21)
    a = rng.normal(3, 2, n)
    b = rng.normal(0, 1, n)
    g = rng.choice(["p", "q", "r"], n)
    g[-30:] = "s"  # a level that only the last file holds
    c = 0.7 * b + rng.normal(0, 0.1, n)
    y = a - 2 * b + rng.normal(0, 1, n)
    y[rng.choice(n, 40, replace=False)] = np.nan
    return pd.DataFrame({"a": a, "b": b, "c": c, "d": 2 * a - b, "g": g, "y": y})


@pytest.fixture(scope="module")
def dataset(tmp_path_factory) -> tuple[Path, Path]:
    """A folder of 3 Parquet files (several row groups each) and the same rows in one file."""
    root = tmp_path_factory.mktemp("dask")
    folder = root / "parts"
    folder.mkdir()
    df = data()
    for i in range(3):
        part = df.iloc[i * 800:(i + 1) * 800]
        part.to_parquet(folder / f"part-{i}.parquet", row_group_size=300)
    whole = root / "whole.parquet"
    df.to_parquet(whole)
    return folder, whole


# Runs before the shared cluster starts, so the two never run at once.
def test_default_local_cluster_and_bad_folder(dataset, tmp_path: Path) -> None:
    folder, whole = dataset
    F = dask_factor(folder, [{"step": "response", "column": "y"}], None)  # its own cluster
    F1, _ = stream_factor(whole, [{"step": "response", "column": "y"}])
    assert F.columns == F1.columns
    # Reference: TᵀT is the Gram matrix of [1, X, y]; the single-file stream's factor has the
    # same Gram matrix (the in-memory analysis agrees with it in the test above).
    assert np.allclose(F.T.T @ F.T, F1.T.T @ F1.T, rtol=1e-10, atol=1e-10 * np.abs(F1.T).max()**2)
    with pytest.raises(InputError, match="no Parquet files"):
        dask_factor(tmp_path, [], "tcp://127.0.0.1:1")


@pytest.fixture(scope="module")
def cluster():
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                      dashboard_address=None, host="127.0.0.1") as c:
        yield c  # the context manager shuts the workers and scheduler down


@pytest.mark.parametrize("name", list(STEPS))
def test_cluster_equals_in_memory(dataset, cluster, name: str) -> None:
    folder, whole = dataset
    steps = STEPS[name]
    F, info = dask_stream(folder, steps, cluster.scheduler_address)
    from rankscope.core.diagnosis import diagnose_factor

    got = diagnose_factor(F, response=info.response, groups=info.groups).to_dict()
    ref, design = in_memory(whole, steps)
    assert len(pieces(folder)) == 9  # 3 files × 3 row groups: each reduced on a worker
    # Reference: the in-memory analysis of the same rows, read as one file.
    assert differences(got, ref) == []
    assert (info.layout.rows_used, info.layout.dropped_by) == (design.rows_used,
                                                               design.dropped_by)
    single, _ = streamed(whole, steps, block_rows=500)
    # Reference: the in-memory analysis again, through the single-machine stream.
    assert differences(single, ref) == []
    assert info.passes == (2 if name == "center, then square" else 1)
