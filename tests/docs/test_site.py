"""The README and the documentation site: the site builds offline with `mkdocs build --strict`
(broken links and pages left out of the nav fail), the README stays short, its links resolve,
and its Python example runs."""

from __future__ import annotations

import importlib.util
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
README = ROOT / "README.md"
DOCS = ROOT / "docs"
TEST_COMMAND = (
    'python3 -m venv .venv && .venv/bin/pip install -q -e ".[test]" && .venv/bin/python -m pytest'
)
RUN_COMMAND = (
    "python3 -m venv .venv && .venv/bin/pip install -q -e . && "
    ".venv/bin/rankscope serve demo_data/cold_storage.csv"
)
# The benchmark modules by their names under rankscope.benchmarks; the docs run no other.
OLD_BENCHMARKS = ("app.bench ", "app.tables.bench_read", "app.web.bench_refit",
                  "app.scale.bench_stream", "app.web.load", "app.benchmarks")


def readme() -> str:
    return README.read_text(encoding="utf-8")


def section(text: str, name: str) -> str:
    """The lines between the snippet markers `--8<-- [start:name]` and `[end:name]`."""
    m = re.search(rf"--8<-- \[start:{name}\][^\n]*\n(.*?)\n[^\n]*--8<-- \[end:{name}\]", text, re.S)
    assert m, f"README has no section {name!r}"
    return m.group(1)


def test_site_builds_offline_with_strict_checks(tmp_path) -> None:
    if importlib.util.find_spec("mkdocs") is None or importlib.util.find_spec("material") is None:
        reason = 'mkdocs and mkdocs-material are missing: pip install -e ".[test]"'
        if os.environ.get("CI"):
            pytest.fail(reason)
        pytest.skip(reason)
    out = tmp_path / "site"  # no -q: it hides the warnings that --strict counts
    env = {**os.environ, "NO_MKDOCS_2_WARNING": "1"}
    run = subprocess.run([sys.executable, "-m", "mkdocs", "build", "--strict",
                          "-f", str(ROOT / "mkdocs.yml"), "-d", str(out)],
                         cwd=ROOT, env=env, capture_output=True, text=True, timeout=300)
    assert run.returncode == 0, run.stdout + run.stderr
    pages = sorted(p.relative_to(DOCS).as_posix() for p in DOCS.glob("*.md"))
    for page in pages:
        built = out / ("index.html" if page == "index.md" else f"{page[:-3]}/index.html")
        assert built.exists(), page
    assert (out / "diagnosis.schema.json").exists()
    # The README's own sections are shown in the site, not copied into it.
    assert "People who fit linear models" in (out / "index.html").read_text(encoding="utf-8")
    assert "build_design" in (out / "python" / "index.html").read_text(encoding="utf-8")
    # Nothing in a page is loaded from another host (fonts, scripts, styles).
    loads = re.compile(r"""<(?:link|script|img)[^>]+(?:href|src)=["']?(?:https?:)?//""")
    for html in out.rglob("*.html"):
        assert not loads.search(html.read_text(encoding="utf-8")), html


def test_readme_is_short_and_opens_with_the_job_and_the_two_commands() -> None:
    text = readme()
    lines = text.splitlines()
    assert len(lines) <= 250, len(lines)
    assert lines[0] == "# rankscope"
    assert lines[2].startswith("People who fit linear models for a living")
    blocks = re.findall(r"```bash\n(.*?)\n```", text, re.S)
    assert blocks[:2] == [RUN_COMMAND, TEST_COMMAND]
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert TEST_COMMAND in ci


def test_readme_links_resolve() -> None:
    text = readme()
    targets = re.findall(r"\]\(([^)\s]+)\)", text)
    local = [t for t in targets if not re.match(r"[a-z]+:", t) and not t.startswith("#")]
    assert len(local) >= 15
    for target in local:
        path = ROOT / target.split("#")[0]
        assert path.exists(), target


def test_docs_name_the_benchmarks_by_their_new_modules() -> None:
    texts = [readme(), *(p.read_text(encoding="utf-8") for p in DOCS.glob("*.md"))]
    for text in texts:
        for old in OLD_BENCHMARKS:
            assert f"python -m {old}" not in text
    speed = (DOCS / "speed.md").read_text(encoding="utf-8")
    for new in ("core", "read", "refit", "load"):
        assert f"python -m rankscope.benchmarks.{new}" in speed
    big = (DOCS / "big-files.md").read_text(encoding="utf-8")
    assert "python -m rankscope.benchmarks.stream" in big


def test_readme_report_excerpt_is_what_check_prints() -> None:
    excerpt = re.search(r"An excerpt of the report.*?```\n(.*?)\n```", readme(), re.S).group(1)
    run = subprocess.run([sys.executable, "-m", "rankscope.cli", "check",
                          "demo_data/cold_storage.csv", "--response", "energy_kwh"], cwd=ROOT,
                         capture_output=True, text=True, timeout=120)
    assert run.returncode == 0, run.stderr
    printed = run.stdout.splitlines()
    for line in filter(None, excerpt.splitlines()):
        assert line in printed, line


def test_readme_python_example_runs_on_the_demo(monkeypatch, capsys) -> None:
    code = re.search(r"```python\n(.*?)\n```", section(readme(), "python-api"), re.S).group(1)
    monkeypatch.chdir(ROOT)
    scope: dict = {}
    exec(compile(code, "README.md", "exec"), scope)
    printed = capsys.readouterr().out
    assert "7 of 9" in printed
    # references: °F = 32 + 1.8·°C (NIST SP 811 App. B.8); the 1959 pound is 0.45359237 kg
    assert "outdoor_temp_f = 32·(intercept) + 1.8·outdoor_temp_c" in printed
    assert "goods_in_kg = 0.45359237·goods_in_lb" in printed
