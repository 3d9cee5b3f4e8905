"""A bounded cache keyed by the identity of an object it keeps alive.

Derivations are immutable but not hashable (they hold sympy expressions and dicts); work done
once per derivation (its compiled functions, its first-law proof, its curvature expressions)
is cached by ``id(obj)``.  Each entry holds the object itself, so its id cannot be reused by
another object while the entry exists, and a hit is confirmed with ``is``.  The oldest entry
is dropped beyond ``entries`` (a count, never a time).
"""
from __future__ import annotations

import threading

#: returned by :meth:`IdentityCache.get` on a miss (a cached value may be None or False)
MISSING = object()


class IdentityCache:
    """Bounded, thread-safe map from an object (by identity) to a value.

    Examples
    --------
    >>> cache = IdentityCache(2)
    >>> key = object()
    >>> cache.get(key) is MISSING
    True
    >>> cache.put(key, 3)
    3
    >>> cache.get(key)
    3
    """

    def __init__(self, entries: int):
        self.entries = int(entries)
        self._items: dict = {}
        self._lock = threading.Lock()

    def get(self, obj):
        """The value cached for ``obj``, or :data:`MISSING`."""
        with self._lock:
            hit = self._items.get(id(obj))
        return hit[1] if hit is not None and hit[0] is obj else MISSING

    def put(self, obj, value):
        """Cache ``value`` for ``obj`` (dropping the oldest entries beyond the bound); returns
        the value."""
        with self._lock:
            self._items.pop(id(obj), None)
            while len(self._items) >= self.entries:
                self._items.pop(next(iter(self._items)))
            self._items[id(obj)] = (obj, value)
        return value

    def setdefault(self, obj, make):
        """The value cached for ``obj``, else ``make()`` cached and returned, atomically (for a
        cheap ``make``: it runs under the cache's lock)."""
        with self._lock:
            hit = self._items.get(id(obj))
            if hit is not None and hit[0] is obj:
                return hit[1]
            while len(self._items) >= self.entries:
                self._items.pop(next(iter(self._items)))
            value = make()
            self._items[id(obj)] = (obj, value)
        return value

    def __len__(self) -> int:
        return len(self._items)
