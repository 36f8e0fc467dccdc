"""The shape of the code itself: imports run one way, the HTTP layer stays small and simple.

Rules from the contributor guide (DEVELOPERS.md, "Rules the tests enforce"): no import circle
anywhere in ``service`` (function-level imports included); the mechanism and the endpoint
declarations import without Flask or Prometheus; no function of ``service/api`` above a
cyclomatic complexity of 15 (radon's measure); no module of ``service/api`` above 400 lines of
code (radon's SLOC).
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest
from radon.complexity import cc_visit
from radon.raw import analyze

ROOT = Path(__file__).resolve().parents[1]
SERVICE = ROOT / "service"
MAX_COMPLEXITY = 15
MAX_LINES_OF_CODE = 400


def _modules() -> dict[str, Path]:
    modules = {}
    for path in SERVICE.rglob("*.py"):
        name = ".".join(path.relative_to(ROOT).with_suffix("").parts)
        modules[name.removesuffix(".__init__")] = path
    return modules


def _imports(path: Path, modules: dict[str, Path]) -> set[str]:
    """The service modules a module imports, anywhere in it. ``from package import module`` is an
    import of the module (its package is loaded first in any case, as every parent package is)."""
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.module and node.module.startswith("service"):
            submodules = {f"{node.module}.{alias.name}" for alias in node.names} & modules.keys()
            found |= submodules or ({node.module} & modules.keys())
        elif isinstance(node, ast.Import):
            found |= {alias.name for alias in node.names} & modules.keys()
    return found


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components of more than one module (Tarjan's algorithm, iteratively)."""
    index, low, on_stack, stack, found = {}, {}, set(), [], []
    for root in graph:
        if root in index:
            continue
        work = [(root, iter(sorted(graph[root])))]
        index[root] = low[root] = len(index)
        stack.append(root)
        on_stack.add(root)
        while work:
            node, children = work[-1]
            child = next(children, None)
            if child is not None:
                if child not in index:
                    index[child] = low[child] = len(index)
                    stack.append(child)
                    on_stack.add(child)
                    work.append((child, iter(sorted(graph.get(child, ())))))
                elif child in on_stack:
                    low[node] = min(low[node], index[child])
                continue
            work.pop()
            if work:
                low[work[-1][0]] = min(low[work[-1][0]], low[node])
            if low[node] == index[node]:
                component = []
                while True:
                    member = stack.pop()
                    on_stack.discard(member)
                    component.append(member)
                    if member == node:
                        break
                if len(component) > 1:
                    found.append(sorted(component))
    return found


def test_no_import_circle_in_the_service():
    modules = _modules()
    graph = {name: _imports(path, modules) for name, path in modules.items()}
    assert _cycles(graph) == []


def test_the_cycle_finder_finds_a_circle():
    assert _cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]


def test_the_mechanism_and_the_declarations_import_without_flask_or_prometheus():
    code = ("import sys\n"
            "import service.api.calculation, service.api.registry, service.api.spec\n"
            "print(sorted(m for m in ('flask', 'werkzeug', 'prometheus_client') if m in sys.modules))\n")
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]", out.stdout + out.stderr


API_FILES = sorted((SERVICE / "api").glob("*.py"))


@pytest.mark.parametrize("path", API_FILES, ids=lambda p: p.name)
def test_api_functions_are_simple(path):
    complex_ = [(block.fullname, block.complexity) for block in cc_visit(path.read_text(encoding="utf-8"))
                if block.complexity > MAX_COMPLEXITY]
    assert complex_ == [], f"above a cyclomatic complexity of {MAX_COMPLEXITY}"


@pytest.mark.parametrize("path", API_FILES, ids=lambda p: p.name)
def test_api_modules_are_short(path):
    assert analyze(path.read_text(encoding="utf-8")).sloc <= MAX_LINES_OF_CODE
