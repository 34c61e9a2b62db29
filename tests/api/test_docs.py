"""docs/python-api.md against the code: its notebook session runs as written, and its
example message is the one rankscope gives.

Reference: the document itself (what users read and copy)."""

from __future__ import annotations

import re
import warnings
from pathlib import Path

import pytest

from tests.cli.runner import DEMO, run

ROOT = Path(__file__).resolve().parents[2]
DOC = (ROOT / "docs" / "python-api.md").read_text(encoding="utf-8")


def test_the_notebook_session_runs(monkeypatch):
    pytest.importorskip("statsmodels")
    blocks = re.findall(r"```python\n(.*?)```", DOC, re.S)
    assert len(blocks) >= 4
    monkeypatch.chdir(ROOT)  # the example reads demo_data/ as a notebook beside it would
    namespace: dict = {}
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # an example that warns is not a clean example
        for block in blocks:
            exec(compile(block, "docs/python-api.md", "exec"), namespace)  # noqa: S102
    assert namespace["refit"].full_rank and not namespace["result"].full_rank


def test_the_example_message_is_rankscopes():
    shown = re.search(r"```text\n(formula, character 14: .*?)\n", DOC).group(1)
    got = run("check", DEMO, "--formula", "energy_kwh ~ outdor_temp_c + site")
    assert got.code == 2 and got.err.strip() == f"rankscope: {shown}"


def test_every_public_function_is_documented():
    import rankscope

    for name in ("inspect", "serve", "vif_frame", "gvif_frame", "index_frame",
                 "dependencies_frame", "fit_frame", "to_json"):
        assert f"{name}" in DOC, name
    assert set(rankscope.__all__) >= {"inspect", "serve"}
