"""Package structure: public names exist and modules import only earlier stages of the flow."""

from __future__ import annotations

import ast
import importlib
from pathlib import Path

import pytest

import sizing

PKG = Path(sizing.__file__).resolve().parent


def test_public_names_exist():
    for name in sizing.__all__:
        assert hasattr(sizing, name), name


def _imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text())
    mods: set[str] = set()
    rel_base = path.relative_to(PKG.parent).with_suffix("").parts
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            mods.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = list(rel_base[: len(rel_base) - node.level])
                if path.name == "__init__.py":
                    base = list(rel_base[: len(rel_base) - node.level + 1])
                mods.add(".".join(base + ([node.module] if node.module else [])))
            elif node.module:
                mods.add(node.module)
    return mods


@pytest.mark.parametrize("path", sorted((PKG / "physics").rglob("*.py")), ids=lambda p: str(p.relative_to(PKG)))
def test_physics_imports_no_heavy_layers(path):
    """physics/ is pure: no pydantic, pandas, plotly, and nothing above it in the flow."""
    for mod in _imports(path):
        top = mod.split(".")[0]
        assert top not in {"pydantic", "pandas", "plotly", "cvxpy", "rich"}, (path.name, mod)
        assert not mod.startswith(("sizing.problem", "sizing.optimize", "sizing.report", "sizing.study",
                                   "sizing.cli", "sizing.result")), (path.name, mod)


def test_nothing_imports_cli():
    for path in PKG.rglob("*.py"):
        if path.name.startswith("cli") or path.name == "__main__.py":
            continue
        for mod in _imports(path):
            assert not mod.startswith("sizing.cli"), (path, mod)


def test_report_reads_results_only():
    for path in (PKG / "report").glob("*.py"):
        for mod in _imports(path):
            assert not mod.startswith(("sizing.optimize", "sizing.study")), (path.name, mod)


@pytest.mark.parametrize("mod", ["sizing.physics.staging", "sizing.physics.rocket", "sizing.units"])
def test_modules_import(mod):
    importlib.import_module(mod)


def test_ideal_solve_does_not_load_the_compiled_flight_layer():
    """An ideal delta-v problem never imports numba (it keeps `sizing solve` on such a file quick)."""
    import subprocess
    import sys

    root = PKG.parent
    code = ("import sys; from sizing import load_problem, solve; "
            "r = solve(load_problem('problems/jackdaw_three_stage.toml')); "
            "assert r.success; print('numba' in sys.modules)")
    out = subprocess.run([sys.executable, "-c", code], cwd=root, capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_no_function_is_longer_than_150_lines():
    """Project rule (DEVELOPERS.md): a function over ~150 lines is a defect; split it."""
    long = []
    for path in sorted(PKG.rglob("*.py")):
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                n = node.end_lineno - node.lineno + 1
                if n > 150:
                    long.append(f"{path.relative_to(PKG)}:{node.lineno} {node.name} ({n} lines)")
    assert not long, long
