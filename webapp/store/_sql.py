"""Small helpers shared by the store modules."""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from typing import TypeVar

T = TypeVar("T")

IN_CHUNK = 500  # values per SQL ``IN (...)``, well under every backend's parameter limit


def chunks(items: Sequence[T], size: int = IN_CHUNK) -> Iterator[Sequence[T]]:
    for start in range(0, len(items), size):
        yield items[start : start + size]


def placeholder(paramstyle: str) -> str:
    """The positional parameter mark of a DB-API driver, for the hot paths that bypass
    SQLAlchemy's statement layer (bulk writes, series reads)."""
    marks = {"qmark": "?", "format": "%s", "pyformat": "%s"}
    if paramstyle not in marks:
        raise NotImplementedError(f"the store needs a qmark or format driver, not {paramstyle}")
    return marks[paramstyle]
