"""Running `rankscope` in-process (main) or as `python -m rankscope.cli`, capturing its output.

Test helper only: no checks here.
"""

from __future__ import annotations

import contextlib
import io
import json
import subprocess
import sys
from dataclasses import dataclass
from pathlib import Path

from rankscope.cli import main

ROOT = Path(__file__).resolve().parents[2]
DEMO = str(ROOT / "demo_data" / "cold_storage.csv")
SCHEMA = ROOT / "docs" / "diagnosis.schema.json"
# The planted exact dependencies, removed: one column of each (demo_data/README.md).
REDUCED = ["--drop", "goods_in_kg", "--drop", "outdoor_temp_f", "--drop", "pallets_moved"]


@dataclass
class Result:
    code: int
    out: str
    err: str

    def json(self) -> dict:
        """Parse stdout strictly: NaN and Infinity are not JSON and must not appear."""
        def refuse(token: str) -> None:
            raise ValueError(f"non-JSON constant {token} in the output")

        return json.loads(self.out, parse_constant=refuse)


def run(*args: str) -> Result:
    """main(args) with stdout and stderr captured."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(args))
    return Result(code, out.getvalue(), err.getvalue())


def run_process(*args: str) -> Result:
    """`python -m rankscope.cli args` in a fresh interpreter, as a user's shell would run it."""
    p = subprocess.run([sys.executable, "-m", "rankscope.cli", *args], cwd=ROOT,
                       capture_output=True, text=True, timeout=120)
    return Result(p.returncode, p.stdout, p.stderr)


def loaded_modules(*args: str) -> list[str]:
    """The names in sys.modules after main(args) in a fresh interpreter (its output thrown
    away; exit code 0 asserted)."""
    code = (
        "import contextlib, io, json, sys\n"
        "from rankscope.cli import main\n"
        "with contextlib.redirect_stdout(io.StringIO()):\n"
        f"    code = main({list(args)!r})\n"
        "print(json.dumps([code, sorted(sys.modules)]))\n"
    )
    done = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True,
                          text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    exit_code, modules = json.loads(done.stdout)
    assert exit_code == 0
    return modules
