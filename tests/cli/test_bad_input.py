"""Bad input to `rankscope`: exit code 2, one line on stderr naming the problem, no traceback.

Files are made in a temporary folder; the demo table is read but never changed.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.cli.runner import DEMO, Result, run, run_process


def one_line(r: Result, *words: str) -> None:
    """The documented bad-input behaviour (docs/cli.md): code 2, one stderr line, no trace."""
    assert r.code == 2, (r.code, r.err)
    assert r.out == ""
    lines = r.err.splitlines()
    assert len(lines) == 1, r.err
    assert "Traceback" not in r.err
    for w in words:
        assert w in lines[0], lines[0]


def test_missing_file_in_a_fresh_process(tmp_path: Path) -> None:
    # Reference: the operating system says the path does not exist (it was never made).
    missing = tmp_path / "absent.csv"
    assert not missing.exists()
    one_line(run_process("check", str(missing)), "absent.csv")


def test_missing_file(tmp_path: Path) -> None:
    one_line(run("check", str(tmp_path / "absent.csv")), "absent.csv")


def test_unknown_response_column() -> None:
    # Reference: pandas' reading of the header, which has energy_kwh and no energy.
    import pandas as pd

    assert "energy" not in pd.read_csv(DEMO, nrows=0).columns
    one_line(run("check", DEMO, "--response", "energy"), "--response", '"energy"',
             "energy_kwh")


def test_unknown_response_in_a_fresh_process() -> None:
    one_line(run_process("check", DEMO, "--response", "no_such_column"), "no_such_column")


@pytest.mark.parametrize(
    ("name", "content"),
    [
        ("junk.csv", bytes(range(256)) * 40),  # binary noise
        ("empty.csv", b""),
        ("picture.csv", b"\x89PNG\r\n\x1a\n" + b"\x00" * 64),  # PNG signature (PNG spec)
        ("table.xlsx", b"a,b\n1,2\n"),  # text under a workbook's name
    ],
)
def test_garbage_files(tmp_path: Path, name: str, content: bytes) -> None:
    path = tmp_path / name
    path.write_bytes(content)
    one_line(run("check", str(path)), name)


def test_garbage_file_in_a_fresh_process(tmp_path: Path) -> None:
    path = tmp_path / "noise.csv"
    path.write_bytes(bytes(range(256)) * 40)
    one_line(run_process("check", str(path), "--json"), "noise.csv")


def test_folder_instead_of_file(tmp_path: Path) -> None:
    one_line(run("check", str(tmp_path)))


def test_bad_options() -> None:
    one_line(run("check", DEMO, "--tol", "-1"), "--tol")
    one_line(run("check", DEMO, "--tol", "abc"))
    one_line(run("check", DEMO, "--fail-if", "vif<10"), "--fail-if", "vif<10")
    one_line(run("check", DEMO, "--fail-if", "vif>ten"), "--fail-if")
    one_line(run("check", DEMO, "--fail-if", "roughness>3"), "--fail-if")
    one_line(run("check", DEMO, "--keep", "nope"), "--keep", "nope")
    one_line(run("check", DEMO, "--drop", "nope"), "--drop", "nope")
    one_line(run("check", DEMO, "--categorical", "nope"), "--categorical", "nope")
    one_line(run("check", DEMO, "--response", "site"), "--response site")
    one_line(run("check"), "FILE")
    one_line(run())
    one_line(run("frobnicate"))


def test_bad_recipe_files(tmp_path: Path) -> None:
    one_line(run("check", DEMO, "--recipe", str(tmp_path / "none.json")), "none.json")
    broken = tmp_path / "broken.json"
    broken.write_text('{"steps": [', encoding="utf-8")
    one_line(run("check", DEMO, "--recipe", str(broken)), "broken.json")
    wrong = tmp_path / "wrong.json"
    wrong.write_text('[{"step": "drop", "column": "nope"}]', encoding="utf-8")
    one_line(run("check", DEMO, "--recipe", str(wrong)), "wrong.json", "nope")
    # Reference: 0xFF never occurs in UTF-8 (RFC 3629, section 1).
    binary = tmp_path / "binary.json"
    binary.write_bytes(b"\xff\xfe\x00[]")
    one_line(run("check", DEMO, "--recipe", str(binary)), "binary.json")


def test_help_is_not_an_error() -> None:
    r = run("check", "--help")
    assert r.code == 0 and "--fail-if" in r.out and r.err == ""


def test_response_must_be_numeric_text_file(tmp_path: Path) -> None:
    path = tmp_path / "words.csv"
    path.write_text("x,label\n1,a\n2,b\n3,c\n", encoding="utf-8")
    one_line(run("check", str(path), "--response", "label"), "label")


def test_serve_with_a_missing_file(tmp_path: Path) -> None:
    one_line(run("serve", str(tmp_path / "absent.csv")), "absent.csv")
