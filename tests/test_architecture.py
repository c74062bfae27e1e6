"""Layers only look down: the import graph of femcav/ against the layer order of the design
notes (case/cli -> studies -> driver -> post, eigen, fem -> model, geometry -> units, errors).

Every `from ... import` counts, at module level or inside a function (a function-level import
does not make an upward dependency go away). The layer of each package or top-level module is
written once, in LAYERS. KNOWN_UPWARD lists the upward imports the code still has: the
redesign of issue 18 empties it. The test fails on a new upward import, and also when a listed
one has gone (so the list only shrinks, and says what is left).
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

PACKAGE = Path(__file__).resolve().parent.parent / "femcav"

# lower number = lower layer; a module may import from its own layer or below
LAYERS = {
    "errors": 0, "units": 0, "progress": 0, "metals": 0, "analytic": 0, "schema": 0,
    "memory_room": 0, "exit_codes": 0, "superconductors": 0, "bare_numbers": 0,
    "expressions": 1, "materials": 1, "walls": 1, "wall_resistance": 1, "anisotropy": 1,
    "material_library": 1,
    "geometry": 2, "model": 2, "sizing": 3, "accuracy_plan": 4,
    "fem": 3, "eigen": 3,
    "post": 4,
    # the case layer turns keys into typed data and models; everything above reads those
    "case": 5, "case_parameters": 5, "case_studies": 5, "class_solve": 5, "solver": 5,
    "axisymmetric": 5, "error_bars": 5, "ports": 5,
    "io": 6, "viz": 6,
    "runner": 7, "mesh_runner": 7, "merit": 7, "morph": 7, "temperature": 7,
    "study": 8,
    "solve_command": 9, "cli": 9, "__main__": 9, "": 9,  # "" is femcav/__init__.py
    "verification": 9,    # femcav verify: runs case files like a user, beside cli
    "bar_calibration": 9,   # error-bar coverage on reference cases, solved through the runner
}

# the eigen layer sees matrices, never meshes, walls or case keys
EIGEN_MUST_NOT_IMPORT = {"fem", "geometry", "model", "walls", "materials", "case", "cli",
                         "post", "solver", "axisymmetric", "runner", "study"}

# what eigen still imports from the discretisation (none since the backends take matrices)
KNOWN_EIGEN_IMPORTS: set[str] = set()

# (importing unit, imported unit): what issue 18 removes
KNOWN_UPWARD: set[tuple[str, str]] = set()


def _unit(module: str) -> str:
    """femcav.fem.space -> fem; femcav.cli -> cli; femcav -> ''."""
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else ""


def _imports() -> set[tuple[str, str]]:
    """(importing module, imported femcav module) for every import statement."""
    found = set()
    for path in PACKAGE.rglob("*.py"):
        parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
        is_init = parts[-1] == "__init__"
        if is_init:
            parts = parts[:-1]
        module = ".".join(parts)
        package = parts if is_init else parts[:-1]
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.ImportFrom):
                if node.level:
                    base = package[:len(package) - node.level + 1]
                    target = ".".join(base + ([node.module] if node.module else []))
                else:
                    target = node.module or ""
                if target.split(".")[0] == "femcav":
                    # `from .. import schema` imports the module femcav.schema
                    found.update((module, f"{target}.{alias.name}"
                                  if _is_module(f"{target}.{alias.name}") else target)
                                 for alias in node.names)
            elif isinstance(node, ast.Import):
                found.update((module, a.name) for a in node.names
                             if a.name.split(".")[0] == "femcav")
    return found


def _is_module(name: str) -> bool:
    path = PACKAGE.parent.joinpath(*name.split("."))
    return path.with_suffix(".py").is_file() or (path / "__init__.py").is_file()


def _unit_edges() -> set[tuple[str, str]]:
    return {(_unit(a), _unit(b)) for a, b in _imports() if _unit(a) != _unit(b)}


def test_every_unit_has_a_layer():
    units = {_unit(a) for a, _ in _imports()} | {_unit(b) for _, b in _imports()}
    assert units <= set(LAYERS), f"give these a layer in LAYERS: {sorted(units - set(LAYERS))}"


def test_no_new_upward_import():
    upward = {(a, b) for a, b in _unit_edges() if LAYERS[b] > LAYERS[a]}
    new = upward - KNOWN_UPWARD
    assert not new, f"imports from a higher layer: {sorted(new)}"
    gone = KNOWN_UPWARD - upward
    assert not gone, f"no longer imported upward, remove from KNOWN_UPWARD: {sorted(gone)}"


def test_eigen_sees_matrices_only():
    bad = {b for a, b in _unit_edges() if a == "eigen" and b in EIGEN_MUST_NOT_IMPORT}
    assert bad <= KNOWN_EIGEN_IMPORTS, f"eigen imports {sorted(bad - KNOWN_EIGEN_IMPORTS)}"
    gone = KNOWN_EIGEN_IMPORTS - bad
    assert not gone, f"eigen no longer imports these, remove from KNOWN_EIGEN_IMPORTS: {gone}"


def _cycles(edges: set[tuple[str, str]]) -> list[list[str]]:
    """Strongly connected components with more than one member (Tarjan)."""
    graph: dict[str, list[str]] = {}
    for a, b in edges:
        graph.setdefault(a, []).append(b)
        graph.setdefault(b, [])
    index, low, stack, on_stack, result = {}, {}, [], set(), []

    def visit(v):
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in graph[v]:
            if w not in index:
                visit(w)
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
                result.append(sorted(component))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return result


def test_cycle_finder_finds_a_planted_cycle():
    assert _cycles({("a", "b"), ("b", "c"), ("c", "a"), ("c", "d")}) == [["a", "b", "c"]]
    assert _cycles({("a", "b"), ("b", "c")}) == []


def test_unit_cycles_only_through_known_upward_imports():
    downward_only = {(a, b) for a, b in _unit_edges() if (a, b) not in KNOWN_UPWARD}
    assert _cycles(downward_only) == []


def test_command_line_starts_without_the_solver_stack():
    # `femcav --help` and a case error must not pay for scikit-fem, gmsh or scipy
    code = ("import sys, femcav.cli; "
            "print(sorted(m for m in ('skfem', 'gmsh', 'scipy', 'pyvista') if m in sys.modules))")
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         timeout=60, check=True)
    assert run.stdout.strip() == "[]"


def test_public_names_load_on_first_use():
    import femcav
    for name in femcav.__all__:
        assert getattr(femcav, name) is not None
    try:
        femcav.no_such_name  # noqa: B018
    except AttributeError as exc:
        assert "no_such_name" in str(exc)
    else:
        raise AssertionError("an unknown attribute must raise AttributeError")
