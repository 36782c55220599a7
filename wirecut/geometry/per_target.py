"""Values worked out once per target surface and kept while the target lives.

Several stages derive something costly from a target's arrays (its prepared sampling tables,
its plan view, its crease edges, its plan index) and ask for it many times, in this process
and in worker processes forked after it was made. A target's arrays are taken as fixed once
it is made, so the value is kept in a table weakly keyed by the target object: it goes when
the target goes. An object that cannot be weakly referenced gets the value afresh each time.
"""

from __future__ import annotations

import weakref
from collections.abc import Callable
from typing import Any, Generic, TypeVar

__all__ = ["PerTarget"]

T = TypeVar("T")
_MISSING = object()


class PerTarget(Generic[T]):
    """``make(target, *args)``, computed on the first call for a target and kept after it
    (extra arguments only feed that first computation)."""

    def __init__(self, make: Callable[..., T]) -> None:
        self._make = make
        self._store: weakref.WeakKeyDictionary = weakref.WeakKeyDictionary()

    def __call__(self, target: Any, *args: Any) -> T:
        try:
            hit = self._store.get(target, _MISSING)
        except TypeError:  # cannot be weakly referenced: no cache
            return self._make(target, *args)
        if hit is _MISSING:
            hit = self._make(target, *args)
            self._store[target] = hit
        return hit

    def __contains__(self, target: Any) -> bool:
        try:
            return target in self._store
        except TypeError:
            return False

    def forget(self, target: Any) -> None:
        """Drop the target's value (it is made again if asked for)."""
        try:
            self._store.pop(target, None)
        except TypeError:
            pass
