"""The package's structure, read with ``ast`` from the installed package's files:
no import cycle among derive modules, no module taking another module's underscore
names, no module over 850 lines, and the timer (SIGALRM / setitimer) set in one module.
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

import derive

ROOT = Path(derive.__file__).resolve().parent
MAX_LINES = 850
_TIMER = re.compile(r"setitimer\(|signal\.alarm\(")


def modules() -> dict[str, Path]:
    """Dotted module name -> file, for every .py file of the installed package."""
    out = {}
    for path in sorted(ROOT.rglob("*.py")):
        parts = ("derive",) + path.relative_to(ROOT).with_suffix("").parts
        if parts[-1] == "__init__":
            parts = parts[:-1]
        out[".".join(parts)] = path
    return out


MODULES = modules()


def imports(name: str, path: Path) -> list[tuple[str, str]]:
    """(module imported, name taken from it or "") for every import of a derive module."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package = name.split(".") if path.name == "__init__.py" else name.split(".")[:-1]
    out: list[tuple[str, str]] = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out += [(a.name, "") for a in node.names if a.name in MODULES]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if not target.startswith("derive"):
                continue
            for a in node.names:
                sub = f"{target}.{a.name}"
                # "from . import x" names a submodule when one exists
                out.append((sub, "") if sub in MODULES else (target, a.name))
    return [(m, n) for m, n in out if m in MODULES and m != name]


GRAPH = {name: imports(name, path) for name, path in MODULES.items()}


def cycles(edges: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan, iterative)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on: set[str] = set()
    found: list[list[str]] = []
    counter = 0
    for root in edges:
        if root in index:
            continue
        work = [(root, iter(sorted(edges[root])))]
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on.add(root)
        while work:
            v, it = work[-1]
            w = next(it, None)
            if w is not None:
                if w not in index:
                    index[w] = low[w] = counter
                    counter += 1
                    stack.append(w)
                    on.add(w)
                    work.append((w, iter(sorted(edges[w]))))
                elif w in on:
                    low[v] = min(low[v], index[w])
                continue
            work.pop()
            if work:
                low[work[-1][0]] = min(low[work[-1][0]], low[v])
            if low[v] == index[v]:
                comp = []
                while True:
                    w = stack.pop()
                    on.discard(w)
                    comp.append(w)
                    if w == v:
                        break
                if len(comp) > 1:
                    found.append(sorted(comp))
    return found


def test_the_checks_see_the_whole_package():
    # guards against an empty walk (a wrong root) passing every check below
    assert {"derive", "derive.pipeline", "derive.render", "derive.verify"} <= set(MODULES)
    assert any(GRAPH.values())


def test_cycle_finder_finds_a_planted_cycle():
    assert cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]
    assert cycles({"a": {"b"}, "b": set()}) == []


def test_no_import_cycle():
    # the top-level package re-exports the public API from every stage, so edges into
    # it are left out (as in ../shared/tools/structure.py); sub-packages count
    edges = {m: {d for d, _ in deps} - {"derive"} for m, deps in GRAPH.items()}
    assert cycles(edges) == []


def test_no_module_takes_another_modules_underscore_names():
    taken = [
        f"{m} takes {n} from {d}"
        for m, deps in GRAPH.items()
        for d, n in deps
        if n.startswith("_") and not n.startswith("__")
    ]
    assert taken == []


def test_no_module_over_850_lines():
    long = {m: p.read_text(encoding="utf-8").count("\n") for m, p in MODULES.items()}
    assert {m: n for m, n in long.items() if n > MAX_LINES} == {}


def test_one_module_sets_time_limits():
    timers = sorted(m for m, p in MODULES.items() if _TIMER.search(p.read_text(encoding="utf-8")))
    assert len(timers) <= 1, timers


_TOOL = Path(__file__).resolve().parents[1].parent / "shared" / "tools" / "structure.py"


@pytest.mark.skipif(not _TOOL.is_file(), reason="../shared/tools/structure.py is not beside this checkout")
def test_agrees_with_the_shared_structure_tool():
    """The shared tool (run on this checkout's source) and the checks above (run on the
    installed files) must report the same findings; in CI both read the same code."""
    import subprocess
    import sys

    run = subprocess.run([sys.executable, str(_TOOL), str(Path(__file__).resolve().parents[1])],
                         capture_output=True, text=True, timeout=120)
    lines = run.stdout.splitlines()
    edges = {m: {d for d, _ in deps} - {"derive"} for m, deps in GRAPH.items()}
    ours = {
        "cycles": sorted(" <-> ".join(c) for c in cycles(edges)),
        "private": sorted(f"{m} takes {n} from {d}" for m, deps in GRAPH.items() for d, n in deps
                          if n.startswith("_") and not n.startswith("__")),
        "long": sorted(m for m, p in MODULES.items() if p.read_text(encoding="utf-8").count("\n") > MAX_LINES),
    }
    theirs = {
        "cycles": sorted(ln.removeprefix("import cycle: ") for ln in lines if ln.startswith("import cycle: ")),
        "private": sorted(ln.removeprefix("underscore name across modules: ") for ln in lines
                          if ln.startswith("underscore name across modules: ")),
        "long": sorted(ln.split(": ", 1)[1].split(" (")[0] for ln in lines if ln.startswith("module over 850 lines: ")),
    }
    assert ours == theirs
    # the installed package also holds derive.templates (templates/ at the top level of
    # the checkout, mapped in by pyproject.toml), which the tool does not walk
    code = [m for m in MODULES if not m.startswith("derive.templates")]
    assert f"structure: {len(code)} modules" in lines[-1]
