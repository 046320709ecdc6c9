"""The layer rule of docs/design.md, checked on every module's imports (an AST scan, so a
lazy import inside a function counts too): analysis, imports, store, services, web, cli,
each importing only the layers above it."""

import ast
from pathlib import Path

import pytest

WEBAPP = Path(__file__).resolve().parents[1] / "webapp"
LAYERS = ["analysis", "imports", "store", "services", "web", "cli"]
FORBIDDEN = {layer: set(LAYERS[i + 1 :]) for i, layer in enumerate(LAYERS)}


def layer_of(path: Path) -> str | None:
    relative = path.relative_to(WEBAPP)
    name = relative.parts[0].removesuffix(".py")
    return name if name in LAYERS else None


def webapp_layers_imported(tree: ast.AST) -> set[str]:
    found = set()
    for node in ast.walk(tree):
        names = []
        if isinstance(node, ast.Import):
            names = [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            names = [node.module] + [f"{node.module}.{alias.name}" for alias in node.names]
        for name in names:
            parts = name.split(".")
            if parts[0] == "webapp" and len(parts) > 1 and parts[1] in LAYERS:
                found.add(parts[1])
    return found


def modules():
    return sorted(p for p in WEBAPP.rglob("*.py") if layer_of(p) is not None)


@pytest.mark.parametrize("path", modules(), ids=lambda p: str(p.relative_to(WEBAPP)))
def test_a_module_imports_only_the_layers_above_it(path: Path) -> None:
    layer = layer_of(path)
    imported = webapp_layers_imported(ast.parse(path.read_text()))
    assert imported & FORBIDDEN[layer] == set()


def test_the_scan_sees_an_upward_import() -> None:
    tree = ast.parse("def f():\n    from webapp.web.views import rules\n")
    assert webapp_layers_imported(tree) & FORBIDDEN["services"] == {"web"}


def test_every_layer_has_modules() -> None:
    assert {layer_of(p) for p in modules()} == set(LAYERS)
