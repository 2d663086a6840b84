"""The house rules, read from the source with ``ast``: floors that only point down.

Every import in ``checker/`` (at module level or inside a function) is an edge
of the module graph. The graph must have no circle; a module may import only
from its own package or from a lower floor (two packages on one floor know
nothing of each other); engines read only the model; the command line imports
only the API and the standard library.
"""

from __future__ import annotations

import ast
import sys
from pathlib import Path

import networkx as nx
import pytest

PKG = Path(__file__).resolve().parent.parent / "checker"

FLOORS = {
    "checker.errors": 0, "checker.about": 0, "checker.words": 0,
    "checker.lang": 1, "checker.model": 1, "checker.fileio": 1,
    "checker.elab": 2,
    "checker.engines": 3,
    "checker.claims": 4,
    "checker.tools": 5,
    "checker.report": 6,
    "checker.api": 7,
    "checker": 8,  # the package's __init__: the public names, from the API
    "checker.cli": 9,
    "checker.__main__": 10,
}


def module_name(path: Path) -> str:
    parts = list(path.relative_to(PKG.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def modules() -> dict[str, Path]:
    return {module_name(p): p for p in sorted(PKG.rglob("*.py"))}


def imports_of(name: str, path: Path, known: set[str]) -> set[str]:
    """Modules of ``checker`` that ``name`` imports; ``from pkg import mod`` counts as ``pkg.mod``."""
    is_pkg = path.name == "__init__.py"
    package = name if is_pkg else name.rpartition(".")[0]
    out: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            out.update(a.name for a in node.names if a.name.split(".")[0] == "checker")
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[:len(base) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if target.split(".")[0] != "checker":
                continue
            for a in node.names:
                sub = f"{target}.{a.name}"
                out.add(sub if sub in known else target)
    out.discard(name)
    return out


def floor_of(name: str) -> tuple[str, int]:
    """(package that owns the module, its floor): the longest FLOORS key that prefixes it."""
    best = max((k for k in FLOORS if name == k or name.startswith(k + ".")), key=len)
    return best, FLOORS[best]


def graph() -> nx.DiGraph:
    mods = modules()
    g = nx.DiGraph()
    for name, path in mods.items():
        g.add_node(name)
        for t in imports_of(name, path, set(mods)):
            g.add_edge(name, t)
    return g


def test_every_module_has_a_floor():
    for name in modules():
        floor_of(name)  # raises ValueError for a module outside every floor


def test_no_import_circle():
    cycles = list(nx.simple_cycles(graph()))
    assert not cycles, f"import circles: {cycles[:5]}"


def test_imports_point_down():
    bad = []
    for a, b in graph().edges:
        pa, fa = floor_of(a)
        pb, fb = floor_of(b)
        if pa == pb:
            continue  # inside one package
        if fb >= fa:
            bad.append(f"{a} (floor {fa}) imports {b} (floor {fb})")
    assert not bad, "\n".join(bad)


def test_engines_read_only_the_model():
    bad = [f"{a} imports {b}" for a, b in graph().edges
           if floor_of(a)[0] == "checker.engines" and floor_of(b)[0] not in ("checker.engines", "checker.model",
                                                                           "checker.errors", "checker.words")]
    assert not bad, "\n".join(bad)


def test_reports_do_not_read_engines():
    bad = [f"{a} imports {b}" for a, b in graph().edges
           if floor_of(a)[0] == "checker.report" and floor_of(b)[0] == "checker.engines"]
    assert not bad, "\n".join(bad)


def test_cli_uses_only_the_api_and_the_standard_library():
    path = PKG / "cli.py"
    tree = ast.parse(path.read_text(encoding="utf-8"))
    bad = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                target = node.module or ""
                names = [a.name for a in node.names]
                if not (target == "api" or (target == "" and names == ["api"])):
                    bad.append(f"from {'.' * node.level}{target} import {', '.join(names)}")
            elif node.module and node.module.split(".")[0] not in sys.stdlib_module_names \
                    and node.module != "__future__":
                bad.append(f"from {node.module} import ...")
        elif isinstance(node, ast.Import):
            bad += [a.name for a in node.names if a.name.split(".")[0] not in sys.stdlib_module_names]
    assert not bad, "cli.py reaches past the API: " + "; ".join(bad)


@pytest.mark.parametrize("source, edge", [
    ("from ..claims.result import Result\n", ("checker.report.x", "checker.claims.result")),
    ("from . import api\n", ("checker.cli", "checker.api")),
    ("from ..lang import parse as P\n", ("checker.elab.x", "checker.lang.parse")),
])
def test_the_reader_sees_relative_imports(tmp_path, source, edge):
    # the rules are only as good as the import reader: it must resolve these forms
    name = edge[0]
    p = tmp_path / "x.py"
    p.write_text(source)
    got = imports_of(name, p, set(modules()) | {edge[1]})
    assert edge[1] in got


def test_an_upward_import_would_be_caught():
    # a model module importing a claim: the floor rule must name it
    fa = floor_of("checker.model.aig")[1]
    fb = floor_of("checker.claims.count")[1]
    assert fb >= fa
