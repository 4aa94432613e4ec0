"""The package layout: no import cycle anywhere in reflib/ (module-level and function-level
imports both), dependencies that point one way, and a docstring in every subpackage saying what
lives there. The rules are the project's design notes (common practice, no source); the checker
is scripts/import_graph.py, which anyone can run by hand.
"""

from __future__ import annotations

import ast

import import_graph  # scripts/, on sys.path through tests/conftest.py


def test_no_import_cycle():
    assert import_graph.cycles(import_graph.graph()) == []


def test_layering_rules_are_kept():
    assert import_graph.broken_rules(import_graph.graph()) == []


def test_the_checker_finds_a_cycle_and_a_broken_rule():
    g = {
        "reflib.a": {"reflib.b"},
        "reflib.b": {"reflib.c"},
        "reflib.c": {"reflib.a"},
        "reflib.d": {"reflib.a"},
    }
    assert import_graph.cycles(g) == [["reflib.a", "reflib.b", "reflib.c"]]
    bad = {"reflib.signal.peaks": {"reflib.library.store"}, "reflib.analysis.x": {"reflib.cli"}}
    assert import_graph.broken_rules(bad) == [
        "reflib.analysis.x imports reflib.cli",
        "reflib.signal.peaks imports reflib.library.store",
    ]


def test_function_level_imports_count(tmp_path, monkeypatch):
    src = tmp_path / "reflib" / "m.py"
    src.parent.mkdir()
    (src.parent / "__init__.py").write_text("")
    (src.parent / "n.py").write_text("")
    src.write_text("def f():\n    from reflib import n\n    import reflib.n\n")
    monkeypatch.setattr(import_graph, "ROOT", tmp_path)
    # ``from reflib import n`` runs reflib/__init__.py before it reaches n
    assert import_graph.imports_of(src) == {"reflib", "reflib.n"}


def test_a_sibling_taken_through_its_package_is_a_cycle(tmp_path, monkeypatch):
    """pkg/__init__ re-exports core, core needs bulk, and bulk takes workers through the package:
    bulk -> pkg (its __init__ runs first) -> core -> bulk."""
    pkg = tmp_path / "reflib" / "pkg"
    pkg.mkdir(parents=True)
    (tmp_path / "reflib" / "__init__.py").write_text("")
    (pkg / "__init__.py").write_text("from reflib.pkg.core import Thing\n")
    (pkg / "core.py").write_text("def add():\n    from reflib.pkg.bulk import run\n")
    (pkg / "bulk.py").write_text("def run():\n    from reflib.pkg import workers\n")
    (pkg / "workers.py").write_text("")
    monkeypatch.setattr(import_graph, "ROOT", tmp_path)
    monkeypatch.setattr(import_graph, "PACKAGE", tmp_path / "reflib")
    assert import_graph.cycles(import_graph.graph()) == [
        ["reflib.pkg", "reflib.pkg.bulk", "reflib.pkg.core"]
    ]


def test_every_subpackage_says_what_lives_there():
    for init in sorted(import_graph.PACKAGE.rglob("__init__.py")):
        doc = ast.get_docstring(ast.parse(init.read_text(encoding="utf-8")))
        assert doc and len(doc.split()) >= 8, init.parent.name


def test_every_subpackage_is_installed():
    """``pip install .`` ships only the packages pyproject.toml lists: each subpackage of
    reflib/ must be there, or a plain install would lack it."""
    import re

    text = (import_graph.ROOT / "pyproject.toml").read_text(encoding="utf-8")
    block = re.search(r"^packages = \[(.*?)\]", text, re.S | re.M)
    assert block, "pyproject.toml lists no packages"
    listed = set(re.findall(r'"([\w.]+)"', block.group(1)))
    found = {
        import_graph.module_name(p)
        for p in import_graph.PACKAGE.rglob("__init__.py")
        if "__pycache__" not in p.parts
    }
    assert found - listed == set()
