"""The one place where independent work items fan out: serial, local processes, or Dask.

Every oracle batch, sweep point, minimal-set search and class piece in nogo is
a pure function of picklable inputs; they are mapped through :func:`fan_out`.
Where they run is chosen here and nowhere else:

* by default, serially in this process (``workers`` None or 1);
* ``workers > 1`` without an engine: a local process pool of that size;
* inside ``with engine(local_workers=N):`` a Dask ``LocalCluster`` of N
  worker processes on this machine (``dask.distributed``);
* inside ``with engine(scheduler="tcp://host:8786"):`` an existing Dask
  cluster, reached through its scheduler's address.

Dask is imported only when an engine is opened, so nothing else pays for it.
Results come back in the order of the items; an exception in a work item is
raised here, as in a plain loop.  Dask: M. Rocklin, "Dask: parallel
computation with blocked algorithms and task scheduling", Proc. 14th Python
in Science Conf. (2015).
"""

from __future__ import annotations

import contextlib
from concurrent.futures import ProcessPoolExecutor
from typing import Callable, Iterable, Iterator, TypeVar

T = TypeVar("T")
R = TypeVar("R")

_CLIENT = None  # the Dask client of the innermost open engine, if any


def current_engine() -> str:
    """A short description of where :func:`fan_out` runs work now."""
    if _CLIENT is None:
        return "this process"
    try:
        n = len(_CLIENT.scheduler_info().get("workers", {}))
    except Exception:  # the description is informational only
        n = 0
    return f"Dask scheduler {_CLIENT.scheduler.address} ({n} workers)"


@contextlib.contextmanager
def engine(*, scheduler: str | None = None, local_workers: int | None = None,
           threads_per_worker: int = 1, connect_timeout: str = "10s") -> Iterator[object]:
    """Run every :func:`fan_out` inside the block on Dask.

    ``scheduler``: address of an existing Dask scheduler (e.g.
    ``tcp://10.0.0.5:8786``).  ``local_workers``: start a ``LocalCluster`` with
    that many worker processes for the block and close it afterwards.
    With neither, the block runs serially (the default engine).
    """
    global _CLIENT
    if scheduler is None and not local_workers:
        yield None
        return
    from dask.distributed import Client, LocalCluster

    from .errors import InputError

    cluster = None
    try:
        if scheduler is not None:
            try:
                client = Client(scheduler, timeout=connect_timeout)
            except (OSError, TimeoutError, ValueError) as err:
                raise InputError(f"cannot reach the Dask scheduler at '{scheduler}': {err}",
                                 hint="give the address printed by the scheduler, e.g. tcp://host:8786") from None
        else:
            cluster = LocalCluster(n_workers=int(local_workers), threads_per_worker=threads_per_worker,
                                   processes=True, dashboard_address=None)
            client = Client(cluster)
        previous, _CLIENT = _CLIENT, client
        try:
            yield client
        finally:
            _CLIENT = previous
            client.close()
    finally:
        if cluster is not None:
            cluster.close()


def width() -> int:
    """How many work items the open engine runs at once (1 when serial)."""
    if _CLIENT is None:
        return 1
    try:
        return max(1, sum(w.get("nthreads", 1) for w in _CLIENT.scheduler_info().get("workers", {}).values()))
    except Exception:  # informational: fall back to one at a time
        return 1


def fan_out(fn: Callable[[T], R], items: Iterable[T], workers: int | None = None) -> list[R]:
    """``[fn(x) for x in items]``, in order: on the open Dask engine, a local pool, or serially."""
    items = list(items)
    if _CLIENT is not None and len(items) > 1:
        futures = _CLIENT.map(fn, items, pure=False)
        return _CLIENT.gather(futures)
    if not workers or workers <= 1 or len(items) < 2:
        return [fn(x) for x in items]
    with ProcessPoolExecutor(max_workers=workers) as pool:
        return list(pool.map(fn, items))
