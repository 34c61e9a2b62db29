"""Imports run one way: every import of `app/` (top level or inside a function) against the
table of allowed directions in DEVELOPERS.md, the one place that table is written."""

from __future__ import annotations

import ast
import re
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
GUIDE = ROOT / "DEVELOPERS.md"
HEADER = "| where | holds | may import |"
WHERE = re.compile(r"^`app/([a-z_]+)(?:/|\.py)`$")


@dataclass(frozen=True)
class Edge:
    """One import from a module of one area to another area."""

    source: str
    target: str
    module: str
    line: int

    def __str__(self) -> str:
        return f"{self.module}:{self.line} imports {self.target} ({self.source} → {self.target})"


def allowed_directions(text: str) -> dict[str, set[str]]:
    """Each area of the guide's architecture table with the areas it may import."""
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.strip() == HEADER)
    table: dict[str, set[str]] = {}
    for line in lines[start + 2:]:
        if not line.startswith("|"):
            break
        cells = [c.strip() for c in line.strip().strip("|").split("|")]
        assert len(cells) == 3, f"DEVELOPERS.md: a row needs 3 cells (a stray '|'?): {line}"
        m = WHERE.match(cells[0])
        assert m, f"DEVELOPERS.md: cannot read the area {cells[0]!r} (write `app/NAME/`)"
        may = cells[-1]
        table[m.group(1)] = set() if may in {"—", "-", ""} else {
            a.strip() for a in may.split(",")}
    return table


def area_of(module: str) -> str | None:
    """The top-level area of a dotted name under the package (None for the package itself or
    outside). The folder is app/, the import name rankscope (setup.py maps one onto the
    other), so both spellings name the same modules."""
    parts = module.split(".")
    inside = parts[0] in ("app", "rankscope") and len(parts) > 1 and parts[1] != "__main__"
    return parts[1] if inside else None


def module_name(path: Path, root: Path) -> str:
    parts = list(path.relative_to(root).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def imports_of(path: Path, root: Path) -> list[tuple[str, int]]:
    """Every dotted name the module imports, with its line: at the top, inside functions and
    under TYPE_CHECKING alike (ast.walk visits every node). `from P import N` yields P.N too,
    since N may be a module."""
    name = module_name(path, root)
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    found: list[tuple[str, int]] = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"), str(path))):
        if isinstance(node, ast.Import):
            found += [(a.name, node.lineno) for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[: len(package.split(".")) - node.level + 1]
                base_name = ".".join(base + ([node.module] if node.module else []))
            else:
                base_name = node.module or ""
            found.append((base_name, node.lineno))
            found += [(f"{base_name}.{a.name}", node.lineno) for a in node.names]
    return found


def edges_between_areas(root: Path) -> list[Edge]:
    """Imports from one top-level area of root/app to another."""
    app = root / "app"
    areas = {p.stem for p in app.iterdir() if p.suffix == ".py" or (p / "__init__.py").exists()}
    areas -= {"__init__", "__main__"}
    edges: dict[tuple[str, str, str, int], Edge] = {}
    for path in sorted(app.rglob("*.py")):
        name = module_name(path, root)
        source = area_of(name)
        for target_name, line in imports_of(path, root):
            target = area_of(target_name)
            if target is not None and target in areas and target != source:
                edge = Edge(source or "app", target, name, line)
                edges[(edge.source, target, name, line)] = edge
    return list(edges.values())


def cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """The strongly connected groups of more than one area (Tarjan's algorithm)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    out: list[list[str]] = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        for w in graph.get(v, ()):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            group = []
            while True:
                w = stack.pop()
                group.append(w)
                if w == v:
                    break
            if len(group) > 1:
                out.append(sorted(group))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return out


def test_the_guide_lists_every_area_once_and_its_directions_have_no_cycle() -> None:
    table = allowed_directions(GUIDE.read_text(encoding="utf-8"))
    app = ROOT / "app"
    on_disk = {p.stem for p in app.iterdir()
               if (p.suffix == ".py" and p.stem not in ("__init__", "__main__"))
               or (p / "__init__.py").exists()}
    assert set(table) == on_disk, "DEVELOPERS.md's architecture table and app/ differ"
    unknown = {a for targets in table.values() for a in targets} - set(table)
    assert not unknown, f"DEVELOPERS.md names areas that do not exist: {sorted(unknown)}"
    assert cycles(table) == []


def test_every_import_runs_in_an_allowed_direction() -> None:
    table = allowed_directions(GUIDE.read_text(encoding="utf-8"))
    upward = [str(e) for e in edges_between_areas(ROOT)
              if e.source != "app" and e.target not in table[e.source]]
    assert upward == [], "imports DEVELOPERS.md does not allow:\n" + "\n".join(upward)


def test_no_cycle_between_areas() -> None:
    graph: dict[str, set[str]] = {}
    for e in edges_between_areas(ROOT):
        graph.setdefault(e.source, set()).add(e.target)
    assert cycles(graph) == []


def test_the_walk_sees_imports_inside_functions_and_relative_ones(tmp_path: Path) -> None:
    """The checker itself, on a planted tree: a function-level and a relative upward import."""
    for area in ("low", "high"):
        (tmp_path / "app" / area).mkdir(parents=True)
        (tmp_path / "app" / area / "__init__.py").write_text("")
    (tmp_path / "app" / "__init__.py").write_text("")
    (tmp_path / "app" / "high" / "top.py").write_text("from app.low import x\n")
    (tmp_path / "app" / "low" / "x.py").write_text(
        "def f():\n    from app.high import top\n    return top\n")
    (tmp_path / "app" / "low" / "y.py").write_text("from ..high import top\n")
    edges = {(e.module, e.target, e.line) for e in edges_between_areas(tmp_path)}
    assert edges == {("app.high.top", "low", 1), ("app.low.x", "high", 2),
                     ("app.low.y", "high", 1)}
    graph = {"high": {"low"}, "low": {"high"}}
    assert cycles(graph) == [["high", "low"]]
    table = allowed_directions(f"{HEADER}\n|---|---|---|\n| `app/high/` | h | low |\n"
                               "| `app/low/` | l | — |\n")
    assert table == {"high": {"low"}, "low": set()}
