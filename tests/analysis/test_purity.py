"""webapp.analysis is pure: numpy, pandas, scipy, statsmodels and the standard library only."""

import ast
import sys
from pathlib import Path

ANALYSIS = Path(__file__).resolve().parents[2] / "webapp" / "analysis"
ALLOWED = {"numpy", "pandas", "scipy", "statsmodels", "__future__"} | set(sys.stdlib_module_names)
NO_IO = {"open", "print", "input"}


def imported_roots(tree: ast.AST):
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            yield from (alias.name.split(".")[0] for alias in node.names)
        elif isinstance(node, ast.ImportFrom) and node.level == 0:
            yield node.module.split(".")[0]


def test_analysis_imports_only_the_scientific_stack():
    bad = {}
    for path in ANALYSIS.glob("*.py"):
        tree = ast.parse(path.read_text())
        roots = set(imported_roots(tree)) - ALLOWED
        roots -= {"webapp"} if all_webapp_imports_are_analysis(tree) else set()
        if roots:
            bad[path.name] = sorted(roots)
    assert bad == {}


def all_webapp_imports_are_analysis(tree: ast.AST) -> bool:
    # webapp._lazy is the standard-library helper for lazy package exports
    return all(
        node.module.startswith("webapp.analysis") or node.module == "webapp._lazy"
        for node in ast.walk(tree)
        if isinstance(node, ast.ImportFrom) and node.level == 0 and node.module.startswith("webapp")
    )


def test_analysis_does_no_io():
    calls = {
        (path.name, node.func.id)
        for path in ANALYSIS.glob("*.py")
        for node in ast.walk(ast.parse(path.read_text()))
        if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id in NO_IO
    }
    assert calls == set()


def test_no_web_or_database_stack_in_the_source():
    for path in ANALYSIS.glob("*.py"):
        text = path.read_text()
        for name in ("flask", "sqlalchemy", "requests", "sqlite3"):
            assert f"import {name}" not in text.lower(), (path.name, name)


def test_importing_the_core_loads_no_web_or_database_stack():
    """docs/design.md (layers): importing webapp.analysis must not pull in Flask or SQLAlchemy."""
    import subprocess

    code = (
        "import sys, webapp.analysis; "
        "print(sorted(m for m in ('flask', 'sqlalchemy', 'alembic') if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"
