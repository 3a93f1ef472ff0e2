"""A small LRU cache of response bodies, keyed by bundle version, decisions version, query and options."""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Hashable
from typing import Generic, TypeVar

__all__ = ["ResultCache"]

V = TypeVar("V")


class ResultCache(Generic[V]):
    """Thread-safe LRU. Parameters: `size`, entries kept (0 turns the cache off)."""

    def __init__(self, size: int) -> None:
        self.size = size
        self.hits = 0
        self.misses = 0
        self._items: OrderedDict[Hashable, V] = OrderedDict()
        self._lock = threading.Lock()

    def get(self, key: Hashable) -> V | None:
        if self.size <= 0:
            return None
        with self._lock:
            found = self._items.get(key)
            if found is None:
                self.misses += 1
                return None
            self._items.move_to_end(key)
            self.hits += 1
            return found

    def put(self, key: Hashable, value: V) -> None:
        if self.size <= 0:
            return
        with self._lock:
            self._items[key] = value
            self._items.move_to_end(key)
            while len(self._items) > self.size:
                self._items.popitem(last=False)
