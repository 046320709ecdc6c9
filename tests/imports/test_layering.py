"""webapp/imports reads files only: no database, no web framework (docs/design.md, layers)."""

import ast
from pathlib import Path

import webapp.imports

FORBIDDEN = {"flask", "sqlalchemy", "sqlite3", "alembic", "webapp.store", "webapp.web"}


def test_importers_import_no_database_or_web_code():
    package = Path(webapp.imports.__file__).parent
    offenders = []
    for source in sorted(package.glob("*.py")):
        for node in ast.walk(ast.parse(source.read_text())):
            names = []
            if isinstance(node, ast.Import):
                names = [alias.name for alias in node.names]
            elif isinstance(node, ast.ImportFrom) and node.module:
                names = [node.module]
            for name in names:
                if any(name == f or name.startswith(f + ".") for f in FORBIDDEN):
                    offenders.append(f"{source.name}: {name}")
    assert offenders == []
    assert len(list(package.glob("*.py"))) > 5  # the scan did look at the modules


def test_public_names():
    assert set(webapp.imports.__all__) >= {
        "parse_file",
        "parse_bytes",
        "detect_format",
        "FORMATS",
        "ImportRejected",
        "ParsedImport",
        "Problem",
        "SeriesMeta",
        "series_key",
        "parse_series_key",
    }


def test_importing_the_importers_loads_no_web_or_database_library():
    import subprocess
    import sys

    code = (
        "import sys, webapp.imports; "
        "print(sorted(m for m in ('flask', 'sqlalchemy', 'alembic') if m in sys.modules))"
    )
    root = Path(webapp.imports.__file__).parents[2]
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=root
    )
    assert out.stdout.strip() == "[]"
