"""`check FILE --stream` through stream_check: the same JSON as the in-memory check, a progress
bar on stderr, exit codes.
"""

from __future__ import annotations

import io
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from rankscope import cli
from rankscope.cli import stream_check
from tests.scale.stream_compare import differences


@pytest.fixture(scope="module")
def shop(tmp_path_factory) -> Path:
    rng = np.random.default_rng(11)
    n = 1500
    price = rng.uniform(2, 9, n)
    ads = rng.normal(10, 3, n)
    df = pd.DataFrame({
        "price": price, "ads": ads, "spend": 3 * ads + 5,  # planted: spend = 3·ads + 5
        "region": rng.choice(["north", "south", "west"], n),
        "sales": 40 - 2 * price + 0.8 * ads + rng.normal(0, 1, n),
    })
    df.loc[rng.choice(n, 30, replace=False), "price"] = np.nan
    p = tmp_path_factory.mktemp("cli") / "shop.csv"
    df.to_csv(p, index=False)
    return p


def _run_stream(argv: list[str]) -> tuple[int, str, str]:
    args = cli.build_parser().parse_args(argv)
    out, err = io.StringIO(), io.StringIO()
    code = stream_check(args, out=out, err=err)
    return code, out.getvalue(), err.getvalue()


def test_stream_json_equals_the_in_memory_check(shop: Path, capsys) -> None:
    argv = ["check", str(shop), "--response", "sales", "--json", "--fail-if", "deficient"]
    code, out, err = _run_stream(argv)
    assert cli.main(argv) == code == cli.EXIT_CROSSED
    ref = json.loads(capsys.readouterr().out)
    got = json.loads(out)
    assert got.pop("stream")["passes"] == 1
    # Reference: the in-memory `rankscope check --json` on the same file and options.
    assert differences(got, ref) == []
    assert got["design"] == ref["design"]
    assert got["cautions"] == ref["cautions"]
    assert got["checks"] == ref["checks"]
    assert "100%" in err and "rows" in err  # the progress lines, one per tenth off a terminal


def test_stream_text_report_and_bad_input(shop: Path) -> None:
    code, out, _ = _run_stream(["check", str(shop), "--response", "sales"])
    assert code == cli.EXIT_OK
    # Reference: the relation planted in the test data, spend = 3·ads + 5.
    assert "spend" in out and "ads" in out
    with pytest.raises(cli.InputError) as e:
        _run_stream(["check", str(shop), "--response", "nope"])
    assert e.value.where == "--response"
    with pytest.raises(cli.InputError) as e:
        _run_stream(["check", str(shop), "--sheet", "one"])
    assert e.value.where == "--sheet"
