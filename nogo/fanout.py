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
raised here, as in a plain loop (the one of the first failing item in item
order, as the loop would raise).

On Dask a task costs about 2 ms of round trip (measured on a 2-worker
LocalCluster; a round of two tasks about 12 ms), while a ridge hull or an LP
often takes 5 ms, so the items go in *chunks*: a few per worker (``_PER_WORKER``),
formed by longest-processing-time-first when the caller gives a cost estimate
(R. L. Graham, "Bounds on multiprocessing timing anomalies", SIAM J. Appl.
Math. 17, 416 (1969)) and submitted dearest first, so one large item does not
start last and leave the other workers idle.  An input every item shares
(``shared=``, e.g. the model) is scattered to every worker once per engine
instead of being pickled with each item (so it must not change while the
engine is open).  Opening an engine also imports nogo on each worker, so that
cost is part of the start-up and not of the first job.  Dask: M. Rocklin,
"Dask: parallel computation with blocked algorithms and task scheduling",
Proc. 14th Python in Science Conf. (2015).
"""

from __future__ import annotations

import contextlib
import heapq
from concurrent.futures import ProcessPoolExecutor
from functools import partial
from typing import Callable, Iterable, Iterator, TypeVar

T = TypeVar("T")
R = TypeVar("R")

_CLIENT = None  # the Dask client of the innermost open engine, if any
_SCATTERED: list = []  # (object, its Dask future) scattered on the open engine, newest last
_KEEP = 8  # scattered inputs remembered per engine
_PER_WORKER = 4  # chunks per worker: enough to even out unequal chunks, few enough to keep round trips rare
_NO_SHARED = object()


def _warm_up() -> None:
    """Import what the work items use, on a worker, when the engine opens."""
    import importlib

    for name in ("nogo.polytope.adjacency", "nogo.polytope.oracle", "nogo.check", "cdd"):
        try:
            importlib.import_module(name)
        except ImportError:  # an optional piece missing on a remote worker shows up when an item needs it
            pass


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
        saved, _SCATTERED[:] = list(_SCATTERED), []
        try:
            try:
                client.run(_warm_up)
            except Exception as err:  # e.g. a remote worker without nogo installed
                raise InputError(f"the Dask workers cannot load nogo: {err}",
                                 hint="install nogo (the same version) on every worker") from None
            yield client
        finally:
            _CLIENT = previous
            _SCATTERED[:] = saved
            client.close()
    finally:
        if cluster is not None:
            cluster.close()


def is_open() -> bool:
    """Whether a Dask engine is open (then every :func:`fan_out` of two or more items goes to it)."""
    return _CLIENT is not None


def width() -> int:
    """How many work items the open engine runs at once (1 when serial)."""
    if _CLIENT is None:
        return 1
    try:
        return max(1, sum(w.get("nthreads", 1) for w in _CLIENT.scheduler_info().get("workers", {}).values()))
    except Exception:  # informational: fall back to one at a time
        return 1


def fan_out(fn: Callable[..., R], items: Iterable[T], workers: int | None = None, *,
            shared: object = _NO_SHARED, cost: Callable[[T], float] | None = None) -> list[R]:
    """``[fn(x) for x in items]``, in order: on the open Dask engine, a local pool, or serially.

    ``shared``: an input common to every item; then ``fn(shared, x)`` is called
    and *shared* travels to each worker once per engine (by identity: do not
    change it in place while the engine is open).  ``cost``: an estimate of an
    item's run time (any monotone scale), used only to balance the chunks.
    """
    items = list(items)
    call = fn if shared is _NO_SHARED else partial(fn, shared)
    if _CLIENT is not None and len(items) > 1:
        return _on_dask(fn, items, shared, cost)
    if not workers or workers <= 1 or len(items) < 2:
        return [call(x) for x in items]
    with ProcessPoolExecutor(max_workers=workers) as pool:
        return list(pool.map(call, items, chunksize=max(1, len(items) // (_PER_WORKER * workers))))


def chunks_for(n: int, slots: int, costs: list[float] | None = None) -> list[list[int]]:
    """Item indices in at most ``_PER_WORKER * slots`` chunks, dearest chunk first, each in item order.

    Without costs: contiguous runs of equal length.  With costs: each item, dearest
    first, into the chunk with the least cost so far (Graham's LPT rule).
    """
    m = max(1, min(n, _PER_WORKER * max(1, slots)))
    if costs is None:
        size, extra = divmod(n, m)
        out, i = [], 0
        for k in range(m):
            j = i + size + (k < extra)
            out.append(list(range(i, j)))
            i = j
        return out
    load = [(0.0, k) for k in range(m)]
    parts: list[list[int]] = [[] for _ in range(m)]
    for i in sorted(range(n), key=lambda i: -costs[i]):
        c, k = heapq.heappop(load)
        parts[k].append(i)
        heapq.heappush(load, (c + max(0.0, float(costs[i])), k))
    total = {k: c for c, k in load}
    return [sorted(parts[k]) for k in sorted(range(m), key=lambda k: -total[k]) if parts[k]]


def _run_chunk(fn, shared, has_shared: bool, items: list) -> tuple[list, tuple[int, BaseException] | None]:
    """One chunk on a worker: its results, and (position, exception) of the first item that failed."""
    out = []
    for pos, x in enumerate(items):
        try:
            out.append(fn(shared, x) if has_shared else fn(x))
        except Exception as err:  # handed to the caller, who raises the first in item order
            return out, (pos, err)
    return out, None


def _scatter(obj):
    """The Dask future of *obj* on every worker of the open engine (scattered once per engine)."""
    for o, fut in _SCATTERED:
        if o is obj:
            return fut
    fut = _CLIENT.scatter(obj, broadcast=True, hash=False)
    _SCATTERED.append((obj, fut))  # the object is kept alive, so its identity is not reused
    del _SCATTERED[:-_KEEP]
    return fut


def _on_dask(fn, items: list, shared, cost) -> list:
    costs = None if cost is None else [float(cost(x)) for x in items]
    parts = chunks_for(len(items), width(), costs)
    has = shared is not _NO_SHARED
    sh = _scatter(shared) if has else None
    futures = [_CLIENT.submit(_run_chunk, fn, sh, has, [items[i] for i in idx], pure=False, priority=len(parts) - r)
               for r, idx in enumerate(parts)]
    out: list = [None] * len(items)
    first: tuple[int, BaseException] | None = None
    for idx, (res, err) in zip(parts, _CLIENT.gather(futures)):
        for i, r in zip(idx, res):
            out[i] = r
        if err is not None and (first is None or idx[err[0]] < first[0]):
            first = (idx[err[0]], err[1])
    if first is not None:
        raise first[1]
    return out
