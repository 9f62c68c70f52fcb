"""A small thread-safe least-recently-used cache, bounded by entry count and by size."""

from __future__ import annotations

import threading
from collections import OrderedDict
from collections.abc import Callable, Hashable
from typing import Generic, TypeVar

Value = TypeVar("Value")


class LruCache(Generic[Value]):
    """Keeps the most recently used values; ``size_of`` gives each value's weight (bytes,
    say) against ``max_size``.

    Used for immutable, content-addressed things only (a key names one value forever), so
    no invalidation is needed.
    """

    def __init__(
        self,
        *,
        max_entries: int = 128,
        max_size: int | None = None,
        size_of: Callable[[Value], int] | None = None,
    ):
        self.max_entries = max_entries
        self.max_size = max_size
        self._size_of = size_of or (lambda _value: 0)
        self._items: OrderedDict[Hashable, tuple[Value, int]] = OrderedDict()
        self._size = 0
        self._lock = threading.Lock()

    def peek(self, key: Hashable) -> Value | None:
        """The value under ``key`` (marked as recently used), or None."""
        with self._lock:
            item = self._items.get(key)
            if item is None:
                return None
            self._items.move_to_end(key)
            return item[0]

    def put(self, key: Hashable, value: Value) -> None:
        """Keep ``value`` under ``key``, dropping the least recently used beyond the bounds."""
        size = self._size_of(value)
        if self.max_size is not None and size > self.max_size:
            return
        with self._lock:
            if key in self._items:
                self._size -= self._items.pop(key)[1]
            self._items[key] = (value, size)
            self._size += size
            while len(self._items) > self.max_entries or (
                self.max_size is not None and self._size > self.max_size
            ):
                _, (_, dropped) = self._items.popitem(last=False)
                self._size -= dropped

    def get(self, key: Hashable, make: Callable[[], Value]) -> Value:
        """The value under ``key``, made with ``make()`` and kept when absent."""
        value = self.peek(key)
        if value is None:
            value = make()
            self.put(key, value)
        return value

    def clear(self) -> None:
        """Forget everything."""
        with self._lock:
            self._items.clear()
            self._size = 0
