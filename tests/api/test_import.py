"""`import rankscope` stays light: the API's names load on first use, and importing the package
loads neither pandas, scipy nor the web stack. Measured in fresh interpreters."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

import rankscope

HEAVY = ("pandas", "scipy", "fastapi", "uvicorn", "pyarrow", "plotly", "formulaic", "numpy",
         "statsmodels")
#: The budget for `import rankscope` in a fresh interpreter (the issue's 0.3 s), over the bare
#: interpreter's own start (which -X importtime does not count).
BUDGET = 0.3


def _fresh(code: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=120, check=True)


def test_import_loads_nothing_heavy():
    got = _fresh("import sys, json, rankscope; print(json.dumps(sorted(sys.modules)))")
    loaded = {m.split(".")[0] for m in json.loads(got.stdout)}
    assert not loaded & set(HEAVY), sorted(loaded & set(HEAVY))


def test_import_time_is_within_budget():
    # -X importtime reports each module's cumulative import time in microseconds on stderr
    # (Python docs, "-X importtime"); the line for the package itself is the total.
    totals = []
    for _ in range(3):
        err = subprocess.run([sys.executable, "-X", "importtime", "-c", "import rankscope"],
                             capture_output=True, text=True, timeout=120, check=True).stderr
        line = next(ln for ln in err.splitlines() if ln.split("|")[-1].strip() == "rankscope")
        totals.append(int(line.split("|")[1]) / 1e6)
    assert min(totals) < BUDGET, totals


def test_public_names_resolve_lazily():
    assert set(rankscope.__all__) >= {"inspect", "serve", "Inspection", "Recipe", "InputError"}
    for name in rankscope.__all__:
        assert getattr(rankscope, name) is not None
    assert set(rankscope.__all__) <= set(dir(rankscope))
    with pytest.raises(AttributeError):
        _ = rankscope.no_such_name
    assert rankscope.inspect.__doc__ and "Parameters\n    ----------" in rankscope.inspect.__doc__
