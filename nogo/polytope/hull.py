"""Exact convex hulls: cddlib through pycddlib 2.1, rational arithmetic.

K. Fukuda and A. Prodon, "Double description method revisited", LNCS 1120,
91–111 (1996).  The hull is only a *finder*: every facet it returns is
checked afterwards (validity on every point and tightness rank in exact
integer arithmetic; validity on the model by a Farkas certificate).
"""

from __future__ import annotations

from fractions import Fraction
from typing import Sequence

import numpy as np

from .frame import Frame
from .ints import _SAFE, Point, PolytopeError, _lcm, primitive

def _coords_matrix(frame: Frame, points: list[Point]) -> tuple[np.ndarray, int]:
    """Frame coordinates of the points as integers over one denominator (object dtype)."""
    ys = [frame.coords_of(p) for p in points]
    den = _lcm(v.denominator for y in ys for v in y) if ys else 1
    Y = np.array([[int(v * den) for v in y] for y in ys], dtype=object).reshape(len(ys), frame.dim)
    return Y, den


def int_matmul(rows: list[Sequence[int]], Y: np.ndarray, k: int) -> np.ndarray:
    """Exact rows @ Yᵀ for integer data: int64 when no overflow is possible, else Python integers."""
    A = np.array(rows, dtype=object).reshape(len(rows), k)
    if not len(rows) or not len(Y):
        return np.zeros((len(rows), len(Y)), dtype=object)
    amax = max(abs(int(v)) for v in A.flat) if A.size else 0
    ymax = max(abs(int(v)) for v in Y.flat) if Y.size else 0
    if amax * ymax * max(k, 1) < _SAFE:
        return A.astype(np.int64) @ Y.astype(np.int64).T
    return A.dot(Y.T)


def _exact_hull(frame: Frame, points: list[Point]) -> list[tuple[tuple[int, ...], int]]:
    """Facets a·y <= b of conv(points) in frame coordinates, exactly (cddlib, rationals)."""
    import cdd

    rows = [[1] + frame.coords_of(p) for p in points]
    mat = cdd.Matrix(rows, number_type="fraction")
    mat.rep_type = cdd.RepType.GENERATOR
    poly = cdd.Polyhedron(mat)
    H = poly.get_inequalities()
    if len(H.lin_set):
        raise PolytopeError("the hull has equations in frame coordinates: the affine hull was not found")
    out = []
    for i in range(H.row_size):
        r = [Fraction(v) for v in H[i]]
        # row means r0 + r[1:]·y >= 0, i.e. -r[1:]·y <= r0
        vec = [-v for v in r[1:]] + [r[0]]
        L = _lcm(v.denominator for v in vec)
        ints = primitive([int(v * L) for v in vec])
        out.append((tuple(ints[:-1]), ints[-1]))
    return out


def hull_estimate(n_points: int, dim: int) -> str:
    """A rough word on how long the exact hull may take, from measured cases (one core).

    Measured here: 64 points in dimension 15, under a second; 96 points in
    dimension 15, about ten seconds; 64 points in dimension 26 (the
    three-party Bell polytope), about eight minutes.
    """
    if dim <= 12 or n_points <= dim + 20:
        return "seconds at most"
    if dim <= 16 and n_points <= 80:
        return "about a second"
    if dim <= 18 and n_points <= 150:
        return "seconds to a minute"
    return "minutes or more (64 points in dimension 26 took about 8 minutes on one core)"


class HullOutOfTime(Exception):
    """The deadline passed while cddlib was running (its subprocess was stopped)."""


def _hull_child(conn, fn, args) -> None:
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)  # Ctrl-C is the parent's to handle; it stops this child
    try:
        conn.send(("ok", fn(*args)))
    except BaseException as err:  # reported to the parent, which raises it
        conn.send(("error", repr(err)))
    finally:
        conn.close()


def _bounded_hull(frame: Frame, points: list[Point], deadline: float | None):
    """:func:`_exact_hull`, in a forked subprocess that is stopped at *deadline* (cddlib cannot be interrupted)."""
    if deadline is None or len(points) <= frame.dim + 24:
        return _exact_hull(frame, points)
    return run_bounded(_exact_hull, (frame, points), deadline)


def run_bounded(fn, args, deadline: float):
    """fn(*args) in a forked subprocess, stopped at *deadline* (:class:`HullOutOfTime`)."""
    import multiprocessing as mp
    import time

    left = deadline - time.perf_counter()
    if left <= 0:
        raise HullOutOfTime()
    if mp.current_process().daemon:  # a worker process (Dask, a pool) may not start children
        return fn(*args)
    ctx = mp.get_context("fork")
    parent, child = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_hull_child, args=(child, fn, args), daemon=True)
    proc.start()
    child.close()
    try:
        if not parent.poll(left):
            raise HullOutOfTime()
        kind, value = parent.recv()
    finally:
        if proc.is_alive():
            proc.terminate()
        proc.join(1)
        parent.close()
    if kind != "ok":
        raise PolytopeError(f"the exact hull failed: {value}")
    return value


def _hull_in(frame: Frame, hull_frame: Frame, points: list[Point],
             deadline: float | None = None) -> list[tuple[tuple[int, ...], int]]:
    """Facets of conv(points) in *frame*, computed by cddlib in *hull_frame* (the same affine hull).

    With a *deadline* a large hull runs in a subprocess, so a time limit is honoured within a second.
    """
    if hull_frame is frame:
        return _bounded_hull(frame, points, deadline)
    got = _bounded_hull(hull_frame, points, deadline)
    return frame.reduce_many([hull_frame.full(a) for a, _ in got], [b for _, b in got])

