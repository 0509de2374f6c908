"""The package layout holds: stages import only downward, no import circle (deferred and
type-checking imports included), no module over 450 lines, a test module per core module,
and `import vpkit` loads no widget or plotting library.

The rules are the project's own (README, "Architecture"; common practice, no source)."""

import ast
import subprocess
import sys
from pathlib import Path

import pytest

import vpkit

PACKAGE = Path(vpkit.__file__).parent
TESTS = Path(__file__).parent / "unit"

#: Stages from the bottom up: a module may import its own stage and the stages below.
STAGES = {"": 0, "record": 1, "physics": 2, "fitting": 3, "analysis": 4, "output": 5,
          "planning": 6, "panels": 7, "top": 8}
BASE = {"errors", "constants", "units", "arrays", "display"}
#: The one stated exception: a result object's rendering shortcuts hand over to output/
#: (Analysis.summary(), Analysis.figure()); output/ never imports analysis/.
UPWARD_ALLOWED = {("analysis.one_run", "output.run_summary"),
                  ("analysis.one_run", "output.figures")}
MAX_LINES = 450


def _modules() -> dict[str, Path]:
    out = {}
    for p in PACKAGE.rglob("*.py"):
        parts = list(p.relative_to(PACKAGE).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        out[".".join(parts)] = p
    return out


def _imports(name: str, path: Path, modules) -> set[str]:
    """Every vpkit module ``name`` imports, wherever the import statement sits."""
    is_pkg = path.name == "__init__.py"
    package = name.split(".") if name else []
    if not is_pkg:
        package = package[:-1]
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[:len(package) - node.level + 1]
                mod = ".".join(base + ([node.module] if node.module else []))
            elif (node.module or "").split(".")[0] == "vpkit":
                mod = node.module[len("vpkit."):] if node.module != "vpkit" else ""
            else:
                continue
            for alias in node.names:
                sub = f"{mod}.{alias.name}" if mod else alias.name
                found.add(sub if sub in modules else mod)
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.split(".")[0] == "vpkit":
                    found.add(alias.name[len("vpkit."):] if alias.name != "vpkit" else "")
    found.discard(name)
    return {m for m in found if m in modules}


def _stage(name: str) -> int:
    if name in ("", "__main__"):
        return STAGES["top"]
    head = name.split(".")[0]
    return STAGES[""] if head in BASE else STAGES[head]


@pytest.fixture(scope="module")
def graph():
    modules = _modules()
    return {name: _imports(name, path, modules) for name, path in modules.items()}


def test_no_import_circle(graph):
    # Tarjan's strongly connected components; a component of more than one module is a circle.
    index, low, stack, on, circles = {}, {}, [], set(), []

    def visit(v):
        index[v] = low[v] = len(index)
        stack.append(v)
        on.add(v)
        for w in graph[v]:
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
                circles.append(sorted(comp))

    for v in graph:
        if v not in index:
            visit(v)
    assert circles == []


def test_stages_import_only_downward(graph):
    upward = sorted((a, b) for a, targets in graph.items() for b in targets
                    if _stage(b) > _stage(a) and (a, b) not in UPWARD_ALLOWED
                    and a.split(".")[0] != b.split(".")[0])
    assert upward == []


def test_the_allowed_upward_imports_still_exist(graph):
    """An exception nobody needs any more is removed from the list, not kept."""
    for a, b in UPWARD_ALLOWED:
        assert b in graph[a], (a, b)


def test_no_module_over_the_line_limit():
    long = {str(p.relative_to(PACKAGE)): n for p in PACKAGE.rglob("*.py")
            if (n := len(p.read_text(encoding="utf-8").splitlines())) > MAX_LINES}
    assert long == {}


def test_few_modules_at_the_top_level():
    top = sorted(p.name for p in PACKAGE.glob("*.py"))
    assert len(top) <= 8, top


def test_every_core_module_has_its_test_module():
    missing = []
    for p in PACKAGE.rglob("*.py"):
        rel = p.relative_to(PACKAGE)
        if p.name.startswith("_") or rel.parts[0] in ("panels",) or "data" in rel.parts:
            continue
        if len(rel.parts) == 1:
            if p.stem == "constants":  # numbers only; checked by tests/reference
                continue
            want = TESTS / f"test_{p.stem}.py"
        else:
            want = TESTS / rel.parts[0] / f"test_{p.stem}.py"
        if not want.exists():
            missing.append(str(want.relative_to(TESTS.parent.parent)))
    assert missing == []


def test_import_vpkit_loads_no_widget_or_plot_library():
    code = ("import sys, vpkit; print(','.join(m for m in ('ipywidgets', 'matplotlib', "
            "'ipympl') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == ""


def test_every_public_name_imports_from_vpkit():
    for name in vpkit.__all__:
        assert getattr(vpkit, name) is not None, name
