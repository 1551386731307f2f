"""The package layout: the layer contract of pyproject.toml holds, no module imports itself
back through others, and no module outgrows the size the contributor guide sets."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

KIT = Path(__file__).resolve().parents[1] / "kit"
MAX_LINES = 600  # DEVELOPERS.md: split a module before it reaches this size


def _graph():
    import grimp  # a test extra (with import-linter): missing is a failure, not a skip

    return grimp.build_graph("kit", include_external_packages=False)


def _cycles(graph) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan's algorithm)."""
    mods = sorted(m for m in graph.modules if m != "kit")
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on: set[str] = set()
    out: list[list[str]] = []
    counter = [0]
    sys.setrecursionlimit(max(10_000, sys.getrecursionlimit()))

    def visit(v: str) -> None:
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in graph.find_modules_directly_imported_by(v):
            if w == "kit":
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

    for m in mods:
        if m not in index:
            visit(m)
    return out


def test_no_import_cycles():
    """No group of kit modules imports itself back, lazily or not (grimp sees both)."""
    cycles = _cycles(_graph())
    assert cycles == [], f"import cycles inside kit/: {cycles}"


def test_cycle_finder_finds_a_cycle():
    """The cycle finder reports a two-module cycle (guards the check above against passing empty)."""

    class Toy:
        modules = {"kit", "kit.a", "kit.b", "kit.c"}

        @staticmethod
        def find_modules_directly_imported_by(m):
            return {"kit.a": {"kit.b"}, "kit.b": {"kit.a"}, "kit.c": {"kit.a"}}.get(m, set())

    assert _cycles(Toy) == [["kit.a", "kit.b"]]


def test_no_module_reaches_the_stages_through_the_root_package():
    """``import kit`` then ``kit.fit(...)`` (the root's lazy exports) would hide an upward
    import from the layer contract: no module of kit/ imports the root package itself."""
    graph = _graph()
    importers = sorted(m for m in graph.find_modules_that_directly_import("kit")
                       if m != "kit")
    assert importers == [], f"modules that import the root package 'kit': {importers}"


def test_root_import_finder_sees_a_root_import(tmp_path):
    """The check above finds ``import kit`` in a module (guards it against passing empty)."""
    import grimp

    pkg = tmp_path / "toy"
    (pkg / "low").mkdir(parents=True)
    (pkg / "__init__.py").write_text("")
    (pkg / "low" / "__init__.py").write_text("")
    (pkg / "low" / "mod.py").write_text("import toy\n")
    sys.path.insert(0, str(tmp_path))
    try:
        graph = grimp.build_graph("toy", cache_dir=None)
    finally:
        sys.path.remove(str(tmp_path))
    assert graph.find_modules_that_directly_import("toy") == {"toy.low.mod"}


def test_layer_contract():
    """import-linter keeps the stage contract written in pyproject.toml."""
    exe = Path(sys.executable).with_name("lint-imports")
    assert exe.exists(), "lint-imports is missing: install the test extra (pip install -e '.[test]')"
    res = subprocess.run([str(exe)], capture_output=True, text=True, cwd=KIT.parent)
    assert res.returncode == 0, res.stdout[-3000:] + res.stderr[-2000:]


def test_modules_stay_small():
    """Every module of kit/ is under the size limit of the contributor guide."""
    big = {str(p.relative_to(KIT)): n for p in KIT.rglob("*.py")
           if (n := len(p.read_text(encoding="utf-8").splitlines())) >= MAX_LINES}
    assert big == {}, f"modules at or over {MAX_LINES} lines: {big}"


def test_contributor_guide_maps_every_module():
    """DEVELOPERS.md's module map names every module of kit/ (by file or by its folder)."""
    guide = (KIT.parent / "DEVELOPERS.md").read_text(encoding="utf-8")
    a, b = guide.index("## Module map"), guide.index("## How to add things")
    table = guide[a:b]
    missing = []
    for p in sorted(KIT.rglob("*.py")):
        rel = p.relative_to(KIT)
        if p.name in ("__init__.py", "__main__.py"):
            continue
        folder = f"`{rel.parent.as_posix()}/`"
        if p.name not in table and folder not in table:
            missing.append(rel.as_posix())
    assert missing == [], f"modules missing from the module map of DEVELOPERS.md: {missing}"
    assert guide.index("## The data path") < guide.index("## The layer contract") < a
