"""Small caches of the program: a dict that keeps at most a given number of entries.

One way for every bounded cache that is filled in batches (a vectorised call
computes the missing entries at once, which :func:`functools.lru_cache` cannot
do): when a new key would pass the limit, the oldest entries go first. A cache
only spares work: what it holds is what would be computed again.
"""

from __future__ import annotations

__all__ = ["Bounded"]


class Bounded(dict):
    """A dict of at most ``limit`` entries; a new key drops the oldest ones first.

    >>> kept = Bounded(2)
    >>> kept["a"], kept["b"], kept["c"] = 1, 2, 3
    >>> kept, kept.limit
    ({'b': 2, 'c': 3}, 2)
    >>> kept["b"] = 20  # a key already kept is replaced in place
    >>> kept
    {'b': 20, 'c': 3}
    """

    def __init__(self, limit: int) -> None:
        super().__init__()
        if limit < 1:
            raise ValueError(f"a cache keeps at least one entry, not {limit}")
        self.limit = int(limit)

    def __setitem__(self, key, value) -> None:
        if key not in self:
            while len(self) >= self.limit:
                try:  # (another thread may drop the same entry meanwhile)
                    del self[next(iter(self))]
                except (KeyError, RuntimeError, StopIteration):
                    break
        super().__setitem__(key, value)
