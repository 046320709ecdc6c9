"""Small in-process caches for what is costly to rebuild and cheap to key exactly."""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Callable
from typing import Any


class Recent:
    """A small least-recently-used cache shared by the requests of one process."""

    def __init__(self, size: int):
        self.size = size
        self.items: OrderedDict[tuple, Any] = OrderedDict()
        self.lock = threading.Lock()

    def peek(self, key: tuple) -> Any:
        """The value kept for ``key``, or None; builds nothing."""
        with self.lock:
            return self.items.get(key)

    def get(self, key: tuple, build: Callable[[], Any]) -> Any:
        with self.lock:
            if key in self.items:
                self.items.move_to_end(key)
                return self.items[key]
        value = build()
        with self.lock:
            self.items[key] = value
            while len(self.items) > self.size:
                self.items.popitem(last=False)
        return value
