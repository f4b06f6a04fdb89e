"""The import graph of src/rngassay follows the design's list (../shared/design.md, "Layout"): every import points
down the list, never up, and no two files import each other in a circle. Lazy imports inside functions count too.

Layers, top to bottom (a module may import its own layer and any layer below it):
  0 the command line (rngassay.cli, the console entry, ``python -m``, the package facade)
  1 rngassay.api           the importable functions users call
  2 rngassay.report        renderers only (terminal, JSON files, HTML, JUnit, diff)
  3 rngassay.seeds         seed sweeps (built from the battery's parts); rngassay.watch beside it
  4 rngassay.battery       plan, run, grade, conformance
  5 rngassay.model         the report data model
  6 rngassay.checks        check functions and their registry
  7 rngassay.stats         distributions, tails, multiple testing
  8 rngassay.intake        sources, formats, streams, views
  9 rngassay.generators    reference generators
 10 leaf utilities (rngassay.errors, rngassay.sizes, rngassay._version, rngassay.signals)
"""

from __future__ import annotations

import ast
import pathlib
from collections import defaultdict

SRC = pathlib.Path(__file__).resolve().parents[1] / "src"
PKG = "rngassay"
LAYERS = [
    ("rngassay.cli", "rngassay._entry", "rngassay.__main__", "rngassay"),
    ("rngassay.api",),
    ("rngassay.report",),
    ("rngassay.seeds", "rngassay.watch"),
    ("rngassay.battery",),
    ("rngassay.model",),
    ("rngassay.checks",),
    ("rngassay.stats",),
    ("rngassay.intake",),
    ("rngassay.generators",),
    ("rngassay.errors", "rngassay.sizes", "rngassay._version", "rngassay.signals"),
]


def _modules() -> dict[str, pathlib.Path]:
    out = {}
    for f in (SRC / PKG).rglob("*.py"):
        rel = f.relative_to(SRC).with_suffix("")
        parts = rel.parts[:-1] if rel.name == "__init__" else rel.parts
        out[".".join(parts)] = f
    return out


def _layer(mod: str) -> int:
    best, depth = None, -1
    for i, names in enumerate(LAYERS):
        for n in names:
            if (mod == n or mod.startswith(n + ".")) and n.count(".") > depth and (n != PKG or mod == PKG):
                best, depth = i, n.count(".")
    assert best is not None, f"{mod} belongs to no layer: add it to LAYERS (and to the design's list)"
    return best


def _imports(mods: dict[str, pathlib.Path]) -> dict[str, set[str]]:
    edges: dict[str, set[str]] = defaultdict(set)
    for name, f in mods.items():
        tree = ast.parse(f.read_text())
        base = name.split(".") if f.name == "__init__.py" else name.split(".")[:-1]
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                targets = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                if node.level:
                    b = base[: len(base) - node.level + 1]
                    m = ".".join(b + ([node.module] if node.module else []))
                else:
                    m = node.module or ""
                targets = [m + "." + a.name for a in node.names] or [m]
            else:
                continue
            for t in targets:
                while t and t not in mods:
                    t = t.rpartition(".")[0]
                if t and t != name:
                    edges[name].add(t)
    return edges


def test_every_module_has_a_layer():
    for m in _modules():
        _layer(m)


def test_imports_point_down_the_list():
    mods = _modules()
    up = []
    for src, targets in _imports(mods).items():
        for t in targets:
            if t == PKG and src != PKG:
                up.append(f"{src} imports the package facade {t} (import the module instead)")
            elif _layer(t) < _layer(src):
                up.append(f"{src} (layer {_layer(src)}) imports {t} (layer {_layer(t)})")
    assert not up, "upward imports:\n" + "\n".join(sorted(up))


def _cycles(edges: dict[str, set[str]]) -> list[list[str]]:
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on: set[str] = set()
    out: list[list[str]] = []
    counter = [0]

    def visit(v: str) -> None:  # Tarjan's strongly connected components (iterative depth is small here)
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in edges.get(v, ()):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                out.append(sorted(comp))

    for v in list(edges):
        if v not in index:
            visit(v)
    return out


def test_no_import_circles_between_files():
    mods = _modules()
    edges = _imports(mods)
    # a package __init__ that only re-exports its own modules is not a circle of design
    real = []
    for comp in _cycles(edges):
        kept = [m for m in comp if not (mods[m].name == "__init__.py"
                                        and all(x.startswith(m + ".") for x in comp if x != m))]
        if len(kept) > 1:
            real.append(kept)
    assert not real, "import circles: " + "; ".join(" <-> ".join(c) for c in real)


def test_the_checker_finds_an_upward_import_and_a_circle():
    # the test must be able to fail: a made-up graph with one upward import and one circle
    assert _layer("rngassay.checks.classic.gap") > _layer("rngassay.battery.plan")
    assert _cycles({"a": {"b"}, "b": {"a"}, "c": {"a"}}) == [["a", "b"]]


def test_loading_the_command_line_loads_no_numerics():
    # `rngassay --help` and `--version` stay quick: numpy, scipy, numba and matplotlib load only when a command
    # runs (a structural check in a fresh interpreter, not a timing)
    import subprocess
    import sys

    code = ("import sys, rngassay.cli; heavy = [m for m in ('numpy', 'scipy', 'numba', 'matplotlib') "
            "if m in sys.modules]; print(','.join(heavy))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.strip()
    assert out == "", f"loaded at start-up: {out}"
