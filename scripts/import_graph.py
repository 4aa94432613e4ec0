"""The import graph of the reflib package: every import, at module level or inside a function,
resolved to a reflib module; prints the cycles and the layering rules it breaks.

One command, not a test (tests/test_layout.py runs the same checks)::

    python scripts/import_graph.py          # exit 0: no cycle, every rule kept
    python scripts/import_graph.py --edges  # also list every edge

``from reflib.x import y`` counts as an import of ``reflib.x`` (its ``__init__``, which runs
first) and, when ``y`` is a module, of ``reflib.x.y`` too; ``importlib.import_module("reflib...")``
with a constant name counts as well. So a module inside a package imports its siblings by their
full name (``from reflib.library.store import Store``), never through the package, whose
``__init__`` may re-export them. ``import reflib.a.b`` counts as an import of ``reflib.a.b``
only.
"""

from __future__ import annotations

import argparse
import ast
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "reflib"

#: Which rooms a room may not import (DESIGN: io, signal and chem know nothing of the library;
#: analysis knows nothing of the CLI or the server; cli/ and web/ are shells over the API).
FORBIDDEN = {
    "reflib.io": ("reflib.signal", "reflib.analysis", "reflib.library", "reflib.report",
                  "reflib.cli", "reflib.web"),
    "reflib.signal": ("reflib.io", "reflib.analysis", "reflib.library", "reflib.report",
                      "reflib.cli", "reflib.web"),
    "reflib.chem": ("reflib.analysis", "reflib.library", "reflib.report", "reflib.cli",
                    "reflib.web"),
    "reflib.analysis": ("reflib.library", "reflib.report", "reflib.cli", "reflib.web"),
    "reflib.library": ("reflib.report", "reflib.cli", "reflib.web"),
    "reflib.report": ("reflib.cli", "reflib.web"),
    "reflib.web": ("reflib.cli",),
}  # fmt: skip


def module_name(path: Path) -> str:
    rel = path.relative_to(ROOT).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def _is_module(name: str) -> bool:
    p = ROOT.joinpath(*name.split("."))
    return p.with_suffix(".py").is_file() or (p / "__init__.py").is_file()


def imports_of(path: Path) -> set[str]:
    """reflib modules imported anywhere in one file."""
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    me = module_name(path)
    pkg = me if path.name == "__init__.py" else me.rpartition(".")[0]
    found: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found |= {a.name for a in node.names}
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = pkg.split(".")[: len(pkg.split(".")) - node.level + 1]
                base = ".".join(anchor + ([base] if base else []))
            found.add(base)  # ``from pkg import x`` runs pkg's __init__ first, module or not
            for a in node.names:
                sub = f"{base}.{a.name}"
                if _is_module(sub):
                    found.add(sub)
        elif (
            isinstance(node, ast.Call)
            and isinstance(node.func, ast.Attribute)
            and node.func.attr == "import_module"
            and node.args
            and isinstance(node.args[0], ast.Constant)
            and isinstance(node.args[0].value, str)
        ):
            found.add(node.args[0].value)
    return {m for m in found if m == "reflib" or m.startswith("reflib.")} - {me}


def graph() -> dict[str, set[str]]:
    return {module_name(p): imports_of(p) for p in sorted(PACKAGE.rglob("*.py"))}


def cycles(g: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan), each sorted."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on: set[str] = set()
    out: list[list[str]] = []
    counter = [0]

    def visit(v: str) -> None:
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in g.get(v, ()):
            if w not in g:
                continue
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

    sys.setrecursionlimit(10_000)
    for v in sorted(g):
        if v not in index:
            visit(v)
    return out


def broken_rules(g: dict[str, set[str]]) -> list[str]:
    out = []
    for mod, deps in sorted(g.items()):
        for room, banned in FORBIDDEN.items():
            if mod == room or mod.startswith(room + "."):
                for d in sorted(deps):
                    if any(d == b or d.startswith(b + ".") for b in banned):
                        out.append(f"{mod} imports {d}")
        if not (mod.startswith("reflib.cli") or mod == "reflib.__main__"):
            out += [f"{mod} imports {d}" for d in sorted(deps) if d.startswith("reflib.cli")]
    return sorted(set(out))


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--edges", action="store_true", help="list every edge")
    args = ap.parse_args()
    g = graph()
    if args.edges:
        for m, deps in sorted(g.items()):
            print(f"{m} -> {', '.join(sorted(deps)) or '-'}")
    cyc = cycles(g)
    rules = broken_rules(g)
    print(f"{len(g)} modules, {sum(len(d) for d in g.values())} imports between them")
    for c in cyc:
        print("cycle: " + " <-> ".join(c))
    for r in rules:
        print("rule broken: " + r)
    if not cyc and not rules:
        print("no import cycle; every layering rule kept")
    return 1 if cyc or rules else 0


if __name__ == "__main__":
    sys.exit(main())
