"""The house's structure: stages import only the stages before them, no import cycles, modules
and functions small enough to read (DEVELOPERS.md, "Map of the house")."""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "screening"

#: What each sub-package may import (besides itself), in the order of the data flow.
ALLOWED = {
    "base": set(),
    "physics": {"base"},
    "inputs": {"base", "physics"},
    "engine": {"base", "physics", "inputs"},
    "onset": {"base", "physics", "inputs", "engine"},
    "scenarios": {"base", "physics", "inputs", "engine"},
    "report": {"base", "physics", "inputs", "engine", "onset", "scenarios"},
    "cli": {"base", "physics", "inputs", "engine", "onset", "scenarios", "report"},
}
MAX_MODULE_LINES = 600
MAX_FUNCTION_LINES = 80  # body lines, the docstring not counted


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _modules() -> dict[str, Path]:
    return {_module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def _is_type_checking(node: ast.If) -> bool:
    test = node.test
    return (isinstance(test, ast.Name) and test.id == "TYPE_CHECKING") or (
        isinstance(test, ast.Attribute) and test.attr == "TYPE_CHECKING"
    )


def _imports(name: str, path: Path, known: set[str]) -> set[str]:
    """Every module of the package that ``name`` imports, at any depth of the file (imports
    inside functions count: a cycle through a lazy import is still a cycle); imports only for
    type checkers do not."""
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    found: set[str] = set()

    def visit(node: ast.AST) -> None:
        for child in ast.iter_child_nodes(node):
            if isinstance(child, ast.If) and _is_type_checking(child):
                continue
            if isinstance(child, ast.Import):
                found.update(a.name for a in child.names)
            elif isinstance(child, ast.ImportFrom):
                base = child.module or ""
                if child.level:
                    anchor = package.split(".")
                    anchor = anchor[: len(anchor) - child.level + 1]
                    base = ".".join(anchor + ([base] if base else []))
                found.add(base)
                found.update(f"{base}.{a.name}" for a in child.names)
            visit(child)

    visit(ast.parse(path.read_text(encoding="utf-8")))
    return {m for m in found if m in known and m != name}


def _graph() -> dict[str, set[str]]:
    modules = _modules()
    return {name: _imports(name, path, set(modules)) for name, path in modules.items()}


def _stage(module: str) -> str | None:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else None


def test_every_module_belongs_to_a_stage():
    loose = [m for m in _modules() if m != "screening" and _stage(m) not in ALLOWED]
    assert not loose, f"modules outside the stage sub-packages: {loose}"


def test_stages_import_only_the_stages_before_them():
    wrong = []
    for module, imported in _graph().items():
        stage = _stage(module)
        if stage is None:
            continue  # the package's front door may import every stage
        for other in imported:
            target = _stage(other)
            if target is None:
                wrong.append(f"{module} imports the package root")
            elif target != stage and target not in ALLOWED[stage]:
                wrong.append(f"{module} ({stage}) imports {other} ({target})")
    assert not wrong, "imports against the flow:\n" + "\n".join(sorted(wrong))


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components of more than one module (Tarjan's algorithm)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    out: list[list[str]] = []

    def strong(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in graph.get(v, ()):
            if w not in index:
                strong(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                out.append(sorted(component))

    for v in sorted(graph):
        if v not in index:
            strong(v)
    return out


def test_no_import_cycles():
    cycles = _cycles(_graph())
    assert not cycles, "modules that import each other: " + "; ".join(
        " <-> ".join(c) for c in cycles
    )


def test_the_cycle_finder_finds_a_cycle():
    # the checker itself must be able to fail
    assert _cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]
    assert _cycles({"a": {"b"}, "b": set()}) == []


def test_modules_are_at_most_600_lines():
    long = {
        m: n
        for m, p in _modules().items()
        if (n := len(p.read_text(encoding="utf-8").splitlines())) > MAX_MODULE_LINES
    }
    assert not long, f"modules over {MAX_MODULE_LINES} lines: {long}"


def _body_lines(node: ast.FunctionDef | ast.AsyncFunctionDef) -> int:
    first = node.body[0]
    is_doc = isinstance(first, ast.Expr) and isinstance(first.value, ast.Constant)
    start = node.body[1].lineno if is_doc and len(node.body) > 1 else first.lineno
    return node.end_lineno - start + 1


def test_functions_are_at_most_80_lines():
    long = []
    for module, path in _modules().items():
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
                n = _body_lines(node)
                if n > MAX_FUNCTION_LINES:
                    long.append(f"{module}.{node.name}: {n} lines")
    assert not long, f"functions over {MAX_FUNCTION_LINES} lines:\n" + "\n".join(long)


def test_public_api_is_importable_from_the_package():
    import screening

    for name in ("scan", "write_report", "investigate", "write_onset_report", "whatif",
                 "write_whatif_report", "check", "load_plant", "ScanResult", "WhatIfResult",
                 "WindowError", "ConfigError", "Plant", "BANDS", "STATES", "REGIONS",
                 "__version__"):  # fmt: skip
        assert hasattr(screening, name), name
    assert callable(screening.whatif) and callable(screening.scan)
    with pytest.raises(AttributeError, match="no attribute 'scna'"):
        screening.scna  # noqa: B018 - a misspelt name is an AttributeError, as for any module
    assert set(screening.__all__) <= set(dir(screening))


def test_the_command_line_starts_without_what_other_commands_need():
    # a fresh interpreter: which modules `import screening.cli.main` brings in (no timing)
    code = (
        "import sys, screening.cli.main\n"
        "print(' '.join(sorted(sys.modules)))"
    )  # fmt: skip
    out = _printed(code)
    assert "screening.engine.scan" in out  # what `scan` needs is there
    for absent in ("screening.onset.investigate", "screening.scenarios.whatif",
                   "screening.inputs.ingest", "rich.console", "dask", "CoolProp"):  # fmt: skip
        assert absent not in out, absent


def test_dask_stays_importable_after_pint():
    # pint is imported with dask hidden (screening.inputs.units); dask itself is not harmed
    pytest.importorskip("dask")
    code = (
        "import screening.inputs.units as u, dask, dask.base, numpy as np\n"
        "print(u.to_si(np.array([1.0]), 'bar', 'pressure')[0], dask.base.tokenize(1) != '')"
    )  # fmt: skip
    out = _printed(code)
    assert out == ["100000.0", "True"]  # 1 bar = 100 kPa (BIPM SI Brochure, 8th ed. 2006, table 8)


def _printed(code: str) -> list[str]:
    """The words ``code`` prints, run in a fresh interpreter beside the package."""
    return subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True,
        cwd=PACKAGE.parent,
    ).stdout.split()  # fmt: skip
