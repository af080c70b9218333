"""The one place where independent work items fan out.

Every oracle call and sweep point in nogo is a pure function of picklable
inputs; they are mapped through :func:`fan_out` so that a distributed
executor (a Dask or Ray client, say) can replace the local one here, in one
place, without touching the algorithms.
"""

from __future__ import annotations

from concurrent.futures import ProcessPoolExecutor
from typing import Callable, Iterable, TypeVar

T = TypeVar("T")
R = TypeVar("R")


def fan_out(fn: Callable[[T], R], items: Iterable[T], workers: int | None = None) -> list[R]:
    """``[fn(x) for x in items]``, in order; with ``workers > 1`` in a local process pool."""
    items = list(items)
    if not workers or workers <= 1 or len(items) < 2:
        return [fn(x) for x in items]
    with ProcessPoolExecutor(max_workers=workers) as pool:
        return list(pool.map(fn, items))
