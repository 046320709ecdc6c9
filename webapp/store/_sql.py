"""Small helpers shared by the store modules."""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from typing import TypeVar

T = TypeVar("T")

IN_CHUNK = 500  # values per SQL ``IN (...)``, well under every backend's parameter limit


def chunks(items: Sequence[T], size: int = IN_CHUNK) -> Iterator[Sequence[T]]:
    for start in range(0, len(items), size):
        yield items[start : start + size]
