"""The built wheel installs the import name `rankscope` and no top-level `app`, and its
`rankscope check` runs. The wheel goes into a fresh venv; the third-party packages come from
this environment's site-packages through a .pth file (no download)."""

from __future__ import annotations

import subprocess
import sys
import sysconfig
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "demo_data" / "cold_storage.csv"


def _run(*args: str, cwd: Path, **kw) -> subprocess.CompletedProcess:
    return subprocess.run(list(args), cwd=cwd, capture_output=True, text=True, timeout=600,
                          **kw)


@pytest.fixture(scope="module")
def fresh(tmp_path_factory) -> Path:
    tmp = tmp_path_factory.mktemp("wheel")
    built = _run(sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation",
                 "-q", "-w", str(tmp / "dist"), str(ROOT), cwd=tmp)
    assert built.returncode == 0, built.stderr
    wheel = next((tmp / "dist").glob("rankscope-*.whl"))
    venv = tmp / "venv"
    made = _run(sys.executable, "-m", "venv", str(venv), cwd=tmp)
    assert made.returncode == 0, made.stderr
    py = venv / "bin" / "python"
    site = Path(_run(str(py), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])",
                     cwd=tmp).stdout.strip())
    # The dependencies: this environment's site-packages (its .pth files are not read, so
    # the editable checkout of this repository stays out of the fresh venv).
    (site / "deps.pth").write_text(sysconfig.get_paths()["purelib"] + "\n")
    inst = _run(str(py), "-m", "pip", "install", "-q", "--no-deps", "--no-index", str(wheel),
                cwd=tmp)
    assert inst.returncode == 0, inst.stderr
    return venv


def test_wheel_installs_rankscope_and_no_app(fresh: Path, tmp_path: Path) -> None:
    py = fresh / "bin" / "python"
    code = ("import importlib.util as u, rankscope, rankscope.core; "
            "print(rankscope.__file__); print(u.find_spec('app') is None)")
    out = _run(str(py), "-c", code, cwd=tmp_path)
    assert out.returncode == 0, out.stderr
    where, no_app = out.stdout.split()
    assert str(fresh) in where and no_app == "True"


def test_wheel_command_runs_check(fresh: Path, tmp_path: Path) -> None:
    out = _run(str(fresh / "bin" / "rankscope"), "check", str(DEMO), "--response",
               "energy_kwh", "--json", cwd=tmp_path)
    assert out.returncode == 0, out.stderr
    assert '"rank": 12' in out.stdout
    mod = _run(str(fresh / "bin" / "python"), "-m", "rankscope", "check", str(DEMO),
               "--response", "energy_kwh", cwd=tmp_path)
    assert mod.returncode == 0 and "Exact linear dependencies" in mod.stdout, mod.stderr
