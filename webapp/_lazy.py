"""Lazy package exports (PEP 562), so that importing one light module of a package, or
running ``whyfired --help``, does not pay for pandas, scipy and statsmodels.

A package lists ``{submodule: names}``; a name is imported from its submodule the first
time it is asked for, then kept in the package's namespace.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable, Mapping
from typing import Any


def lazy_exports(
    namespace: dict[str, Any], exports: Mapping[str, tuple[str, ...]]
) -> tuple[list[str], Callable[[str], Any], Callable[[], list[str]]]:
    """``__all__``, ``__getattr__`` and ``__dir__`` for the package whose globals are
    ``namespace``; ``exports`` maps a relative submodule (``"._band"``) to its public names."""
    package = namespace["__name__"]
    where = {name: module for module, names in exports.items() for name in names}

    def __getattr__(name: str) -> Any:
        module = where.get(name)
        if module is None:
            raise AttributeError(f"module {package!r} has no attribute {name!r}")
        value = getattr(importlib.import_module(module, package), name)
        namespace[name] = value
        return value

    def __dir__() -> list[str]:
        return sorted(set(namespace) | set(where))

    return list(where), __getattr__, __dir__
