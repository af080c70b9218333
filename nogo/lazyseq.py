"""One base for the read-only sequences whose entries are written out on demand.

Columns, row sources, certificate rows and counterexample entries of large
models are described only when asked for (a report prints a few; a test may
index one).  A subclass gives ``__len__`` and ``_one(i)`` for ``0 <= i <
len``; this base adds negative indices, slices and the bounds check.
"""

from __future__ import annotations

from typing import Sequence


class LazySeq(Sequence):
    """A sequence defined by its length and ``_one(i)``."""

    def __len__(self) -> int:  # pragma: no cover - every subclass defines it
        raise NotImplementedError

    def _one(self, i: int):  # pragma: no cover - every subclass defines it
        raise NotImplementedError

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self._one(k) for k in range(*i.indices(len(self)))]
        i = int(i)
        n = len(self)
        if i < 0:
            i += n
        if not 0 <= i < n:
            raise IndexError(i)
        return self._one(i)
