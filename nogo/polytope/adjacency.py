"""Facets up to symmetry: the adjacency decomposition, with recursion on large faces.

Input: the points of a full-dimensional polytope P (integer coordinates)
and a group G of symmetries of P given as permutations of the points
(:class:`nogo.polytope.group.PointGroup`).  Output: one facet per G-orbit,
with the orbit's size, found without the full hull.

Method (T. Christof and G. Reinelt, "Decomposition and parallelization
techniques for enumerating the facets of combinatorial polytopes",
Int. J. Comput. Geom. Appl. 11, 423 (2001); D. Bremner, M. Dutour Sikirić,
A. Schürmann, "Polyhedral representation conversion up to symmetries",
CRM Proceedings & LN 48, 45 (2009), arXiv:math/0702239):

1. one facet by *gift wrapping* from a supporting hyperplane: rotate it
   about its tight set onto one more point until the tight set has affine
   rank dim - 1;
2. for each new class representative F, the *ridges* of F: the facets of
   the face conv(points on F), itself a polytope of one dimension less;
   small faces by one exact hull (:mod:`.hull`), large ones by the same
   decomposition under the stabiliser of F (the recursive variant of
   Bremner et al.), so only one ridge per stabiliser orbit is needed;
3. each ridge R is rotated about to the neighbouring facet F' (the
   hyperplane through R and the point that makes the smallest dihedral
   step; exact rational arithmetic);
4. F' is reduced to a canonical form — the lexicographically smallest
   image of its point-incidence set under G — and kept when its orbit is
   new.  The facet graph of a polytope is connected (indeed dim-connected,
   Balinski 1961), so when every representative's neighbours are known,
   every orbit has been found.

Every inequality here is an exact integer inequality a·y <= b on the
integer points; nothing is rounded.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from .ints import PolytopeError, _zmat, primitive

_SAFE = 2**62
_BATCH = 8  # faces per round and engine worker: fewer rounds (each a Dask round trip), chunks to balance


def _batch(width: int) -> int:
    """Faces expanded per round: one without an engine (the cheapest first, one by one), else a few per worker."""
    return _BATCH * width if width >= 1 else 1


class OutOfTime(Exception):
    """The deadline passed inside the decomposition (the classes found so far are kept by the caller)."""


@dataclass
class ClassRep:
    a: tuple[int, ...]  # a·y <= b on the integer points
    b: int
    incidence: np.ndarray  # bool over the points: tight there
    orbit: int  # size of the G-orbit
    key: bytes  # canonical incidence (packed bits)


def _dot(Y: np.ndarray, a) -> np.ndarray:
    """Exact Y @ a for integer data."""
    a = [int(v) for v in a]
    ymax = int(np.max(np.abs(Y))) if Y.size else 0
    amax = max((abs(v) for v in a), default=0)
    if ymax * amax * max(len(a), 1) < _SAFE and Y.dtype != object:
        return Y @ np.array(a, dtype=np.int64)
    return Y.astype(object).dot(np.array(a, dtype=object))


def affine_rank(Z: np.ndarray) -> int:
    if len(Z) == 0:
        return -1
    D = Z[1:] - Z[0]
    return _zmat([[int(v) for v in r] for r in D], Z.shape[1]).rank() if len(D) else 0


def _annihilator(Z: np.ndarray) -> list[list[int]]:
    """Integer basis of {u : u·(z - z0) = 0 for all rows z}."""
    k = Z.shape[1]
    D = Z[1:] - Z[0] if len(Z) > 1 else np.zeros((0, k), dtype=np.int64)
    if not len(D):
        return [[int(i == j) for i in range(k)] for j in range(k)]
    X, nullity = _zmat([[int(v) for v in r] for r in D], k).nullspace()
    return [list(primitive([int(X[i, j]) for i in range(k)])) for j in range(nullity)]


def _wrap(Y: np.ndarray, h, B: int, g, C: int, tight: np.ndarray) -> tuple[tuple[int, ...], int]:
    """Rotate h·y <= B about {g·y = C} ∩ {h·y = B} onto the next point (gift wrapping).

    g·y <= C holds on the tight points of h with equality on the ridge.  For
    points off h, s = B - h·y > 0 and f = g·y - C; with μ = max f/s the
    inequality f - μ s <= 0 holds on every point, is tight on the ridge and
    on the maximisers: the neighbouring facet.
    """
    s = B - _dot(Y, h)
    f = _dot(Y, g) - C
    off = np.flatnonzero(~tight)
    if not len(off):
        raise PolytopeError("gift wrapping with no point off the face")
    ff, ss = f[off], s[off]
    approx = ff.astype(float) / ss.astype(float)
    top = float(np.max(approx))
    best = None
    for i in np.flatnonzero(approx >= top - 1e-9 * max(1.0, abs(top))):
        r = Fraction(int(ff[i]), int(ss[i]))
        if best is None or r > best:
            best = r
    p, q = best.numerator, best.denominator
    a = [q * int(gi) + p * int(hi) for gi, hi in zip(g, h)]
    ints = primitive(a + [q * int(C) + p * int(B)])
    return tuple(ints[:-1]), ints[-1]


def _wrap_many(Y: np.ndarray, h, B: int, ridges: list[tuple[list[int], int]], tight: np.ndarray):
    """:func:`_wrap` for all ridges of one face at once (int64 when the bounds allow; exact either way)."""
    if not ridges:
        return []
    Gm = np.array([g for g, _ in ridges], dtype=object)
    Cv = np.array([c for _, c in ridges], dtype=object)
    big = max(int(np.max(np.abs(Gm))), int(np.max(np.abs(Cv))), max(abs(int(v)) for v in h), abs(int(B)))
    ymax = int(np.max(np.abs(Y))) if Y.size else 0
    k = Y.shape[1]
    if Y.dtype == object or big * ymax * (k + 1) > 2**28 or big > 2**28:
        return [_wrap(Y, h, B, g, C, tight) for g, C in ridges]
    Gm, Cv = Gm.astype(np.int64), Cv.astype(np.int64)
    off = ~tight
    Yo = Y[off]
    s = B - Yo @ np.array(h, dtype=np.int64)  # > 0
    f = Yo @ Gm.T - Cv[None, :]  # points × ridges
    best = np.argmax(f / s[:, None].astype(float), axis=0)
    cols = np.arange(len(ridges))
    p, q = f[best, cols], s[best]
    # exact: no point has f/s above p/q (else redo that ridge in fractions)
    bad = np.any(f * q[None, :] > p[None, :] * s[:, None], axis=0)
    g = np.gcd(np.abs(p), q)
    p, q = p // g, q // g
    H = q[:, None] * Gm + p[:, None] * np.array(h, dtype=np.int64)[None, :]
    Bn = q * Cv + p * int(B)
    out = []
    for i in range(len(ridges)):
        if bad[i]:
            out.append(_wrap(Y, h, B, ridges[i][0], ridges[i][1], tight))
            continue
        ints = primitive(list(H[i]) + [Bn[i]])
        out.append((tuple(ints[:-1]), ints[-1]))
    return out


def first_facet(Y: np.ndarray, rng: np.random.Generator) -> tuple[tuple[int, ...], int]:
    """A facet of conv(Y) by repeated gift wrapping from a random supporting hyperplane."""
    n, k = Y.shape
    h = [int(v) for v in rng.integers(-50, 51, size=k)]
    vals = _dot(Y, h)
    B = int(max(vals))
    for _ in range(k + 1):
        tight = vals == B
        T = Y[tight]
        if affine_rank(T) >= k - 1:
            return tuple(h), B
        for u in _annihilator(T):
            if _zmat([h, u], k).rank() == 2:
                break
        else:
            raise PolytopeError("no rotation direction for the first facet")
        C = int(_dot(T[:1], u)[0])
        h, B = _wrap(Y, h, B, u, C, tight)
        vals = _dot(Y, h)
    raise PolytopeError("gift wrapping did not reach a facet")


def ray_facet(Y: np.ndarray, rng: np.random.Generator) -> tuple[tuple[int, ...], int]:
    """The facet a random ray from the centroid leaves conv(Y) through (an LP finds it, exact checks decide).

    Gift wrapping from a random direction tends to land on the facets with the
    most points (positivity), which are the dearest to expand; a ray from an
    interior point meets facets in proportion to their solid angle, so the first
    classes are cheap ones.  HiGHS gives the exit point and the points tight
    there; the facet through them is computed exactly (integer null space) and
    checked on every point; anything short of a facet falls back to gift wrapping.
    """
    from scipy.optimize import linprog

    n, k = Y.shape
    Yf = Y.astype(float)
    c = Yf.mean(axis=0)
    r = rng.normal(size=k)
    # max t: sum_i lam_i y_i - t r = c, sum lam = 1, lam >= 0
    A = np.zeros((k + 1, n + 1))
    A[:k, :n] = Yf.T
    A[:k, n] = -r
    A[k, :n] = 1
    cost = np.zeros(n + 1)
    cost[n] = -1
    res = linprog(cost, A_eq=A, b_eq=np.append(c, 1.0), bounds=[(0, None)] * n + [(0, None)], method="highs")
    if res.status != 0:
        return first_facet(Y, rng)
    h = -np.asarray(res.eqlin.marginals[:k])
    vals = Yf @ h
    top = float(np.max(vals))
    tight = np.flatnonzero(vals >= top - 1e-7 * max(1.0, abs(top), float(np.max(np.abs(vals)))))
    T = Y[tight]
    if affine_rank(T) == k - 1:
        X, nullity = _zmat([[int(v) for v in t] + [-1] for t in T], k + 1).nullspace()
        if nullity == 1:
            v = primitive([int(X[i, 0]) for i in range(k + 1)])
            a, b = list(v[:-1]), v[-1]
            for sgn in (1, -1):
                aa, bb = [sgn * x for x in a], sgn * b
                if not np.any(_dot(Y, aa) > bb):
                    return tuple(aa), bb
    return first_facet(Y, rng)


def _hull_ints(Z: np.ndarray, deadline: float | None = None) -> list[tuple[tuple[int, ...], int]]:
    """Facets a·z <= b of conv(Z) (full-dimensional, integer points), by cddlib in rationals.

    With a *deadline*, a large hull runs in a forked subprocess that is stopped when the time is up.
    """
    if deadline is not None and len(Z) > Z.shape[1] + 24:
        from .hull import HullOutOfTime, run_bounded

        try:
            return run_bounded(_hull_ints, (Z,), deadline)
        except HullOutOfTime:
            raise OutOfTime() from None
    import cdd

    mat = cdd.Matrix([[1] + [int(v) for v in z] for z in Z], number_type="fraction")
    mat.rep_type = cdd.RepType.GENERATOR
    H = cdd.Polyhedron(mat).get_inequalities()
    if len(H.lin_set):
        raise PolytopeError("a face is not full-dimensional in its own coordinates")
    out = []
    for i in range(H.row_size):
        # row r0 + r·z >= 0, i.e. -r·z <= r0; scaled to integers by numerators and denominators (no Fraction sums)
        r = H[i]
        nums = [int(getattr(v, "numerator", v)) for v in r]
        dens = [int(getattr(v, "denominator", 1)) for v in r]
        L = math.lcm(*dens)
        vec = [-n * (L // d) for n, d in zip(nums[1:], dens[1:])] + [nums[0] * (L // dens[0])]
        ints = primitive(vec)
        out.append((tuple(ints[:-1]), ints[-1]))
    return out


class Decomposition:
    """The adjacency decomposition of conv(Y) under the group *perms* (rows: point permutations)."""

    def __init__(self, Y: np.ndarray, perms: np.ndarray, *, deadline: float | None = None,
                 direct_excess: int = 25, depth: int = 0, max_depth: int = 1, seed: int = 1,
                 progress=None, on_class=None, classes=None, seeds: int = 1):
        self.Y = Y
        self.classes = classes  # a GraphClasses (canon.py) instead of the listed group, for large groups
        self.seeds = seeds  # first facets from that many random directions (the cheapest are expanded first)
        self.perms = perms
        self.inv = np.argsort(perms, axis=1) if perms is not None and len(perms) else perms
        self.deadline = deadline
        self.direct_excess = direct_excess
        self.depth = depth
        self.max_depth = max_depth
        self.rng = np.random.default_rng(seed)
        self.progress = progress
        self.on_class = on_class
        self.stats = {"ridge hulls": 0, "recursive faces": 0, "wraps": 0}
        self.skipped = 0
        from ..fanout import is_open, width

        self.width = width() if depth == 0 and is_open() else 0  # 0: no engine, everything in this process
        self.batch = _batch(self.width)
        self.member_of: dict[bytes, bytes] = {}  # packed incidence of every facet of a known class -> class key

    # -- canonical forms ---------------------------------------------------------------------------
    def canonical(self, inc: np.ndarray) -> tuple[bytes, int]:
        """(smallest packed image of the incidence set under the group, orbit size)."""
        imgs = inc[self.inv]  # image under g: point i is tight iff g^-1(i) is
        uniq = np.unique(np.packbits(imgs, axis=1), axis=0)  # rows sorted: the first is the smallest image
        return uniq[0].tobytes(), len(uniq)

    def stabiliser(self, inc: np.ndarray) -> np.ndarray:
        return self.perms[(inc[self.inv] == inc).all(axis=1)]

    def key_of(self, a, b) -> bytes:
        """The class key of the facet a·y <= b (as :meth:`_add` files it)."""
        if self.classes is not None:
            return self.classes.key(a)[0]
        return self.canonical(_dot(self.Y, a) == b)[0]

    def _check_time(self) -> None:
        if self.deadline is not None and time.perf_counter() > self.deadline:
            raise OutOfTime()

    # -- the decomposition ---------------------------------------------------------------------------
    def run(self, start: list[tuple[tuple[int, ...], int]] | None = None,
            done_keys: set[bytes] | None = None) -> list[ClassRep]:
        """Every orbit of facets; *start* seeds known facets, *done_keys* marks classes already expanded."""
        Y = self.Y
        reps: dict[bytes, ClassRep] = {}
        queue: list[bytes] = []
        seeds = list(start or []) or ([first_facet(Y, self.rng)] if self.seeds <= 1 else
                                      [ray_facet(Y, self.rng) for _ in range(self.seeds)])
        for a, b in seeds:
            self._add(reps, queue, a, b)
        done = set(done_keys or ())
        self.reps = reps
        dim = Y.shape[1]
        while True:
            open_ = [key for key in queue if key not in done]
            # Balinski's theorem: the facet graph of a d-polytope is d-connected, so once the facets of
            # the classes not yet expanded number fewer than d, no facet can be missing (every missing
            # one would be cut off from the expanded ones by those fewer than d facets; at least one
            # class must have been expanded for the argument to apply).  The classes left unexpanded
            # are chosen as the dearest (most points on the face) per facet, within that budget.
            if not open_:
                break
            skip: set[bytes] = set()
            if done:
                budget = 0
                for q in sorted(open_, key=lambda q: -self._cost(reps[q]) / reps[q].orbit):
                    if budget + reps[q].orbit < dim:
                        skip.add(q)
                        budget += reps[q].orbit
            todo = [q for q in open_ if q not in skip]
            if not todo:
                break
            # the cheapest faces first; on an engine a few per worker at once (nogo.fanout balances them)
            batch = sorted(todo, key=lambda q: self._cost(reps[q]))[:max(1, self.batch)]
            self._check_time()
            for q in batch:
                queue.remove(q)
            tasks = [self._ridge_task(reps[q]) for q in batch]
            results = self._jobs([t for t, _ in tasks])
            for q, (task, keep), (found, st) in zip(batch, tasks, results):
                F = reps[q]
                for key_, v in st.items():
                    self.stats[key_] += v
                ridges = _lift(found, keep, Y.shape[1])
                self.stats["wraps"] += len(ridges)
                for h, B in _wrap_many(Y, F.a, F.b, ridges, F.incidence):
                    self._add(reps, queue, h, B)
                done.add(q)
                if self.on_class is not None and self.depth == 0:
                    self.on_class(F, reps)
            if self.progress is not None and self.depth == 0:
                self.progress("classes closed", len(done & set(reps)), len(reps))
        self.skipped = len([key for key in queue if key not in done])
        return list(reps.values())

    def _jobs(self, tasks: list) -> list:
        """Run ridge jobs: single hulls through the engine (:func:`nogo.fanout.fan_out`); a face that needs
        the recursion runs its own decomposition here, with *its* hulls fanned out, so one large face does
        not hold a single worker while the others wait."""
        if not self.width or len(tasks) == 1 and not _recursive(tasks[0]):
            return [_ridge_job(t, self.width) for t in tasks]
        from ..fanout import fan_out

        out: list = [None] * len(tasks)
        flat = [i for i, t in enumerate(tasks) if not _recursive(t)]
        for i, r in zip(flat, fan_out(_ridge_job, [tasks[i] for i in flat], cost=_hull_price)):
            out[i] = r
        for i, t in enumerate(tasks):
            if out[i] is None:
                out[i] = _ridge_job(t, self.width)
        return out

    def _cost(self, F: ClassRep) -> float:
        """A rough price of a face's ridge hull: it grows steeply with the points beyond a simplex."""
        return 2.0 ** min(int(np.count_nonzero(F.incidence)) - self.Y.shape[1], 900)  # no float overflow

    def _add(self, reps, queue, a, b) -> None:
        vals = _dot(self.Y, a)
        if np.any(vals > b):
            raise PolytopeError("gift wrapping gave an inequality that a point violates")
        inc = vals == b
        packed = np.packbits(inc).tobytes()
        if packed in self.member_of:  # a facet of a known class: no canonical form needed
            return
        if self.classes is not None:  # large group: the canonical graph, and only the facets met are remembered
            key, orbit = self.classes.key(a)
            self.member_of[packed] = key
            if key not in reps:
                reps[key] = ClassRep(tuple(int(v) for v in a), int(b), inc, orbit, key)
                queue.append(key)
            return
        imgs = np.packbits(inc[self.inv], axis=1)
        uniq = np.unique(imgs, axis=0)
        key = uniq[0].tobytes()  # np.unique sorts rows lexicographically: the smallest image
        for row in uniq:
            self.member_of[row.tobytes()] = key
        reps[key] = ClassRep(tuple(int(v) for v in a), int(b), inc, len(uniq), key)
        queue.append(key)

    def _ridge_task(self, F: ClassRep):
        """A pure work item for the ridges of face F, and the coordinates kept (see :func:`_ridge_job`)."""
        Y = self.Y
        k = Y.shape[1]
        idx = np.flatnonzero(F.incidence)
        j = next(i for i, v in enumerate(F.a) if v)  # drop a coordinate the hyperplane determines
        keep = [i for i in range(k) if i != j]
        Z = Y[idx][:, keep]
        if self.classes is not None:
            stab = self.classes.stabiliser_points(F.a)
            if len(stab) * F.orbit != self.classes.order:
                raise PolytopeError("orbit and stabiliser sizes disagree with the group order")
        else:
            stab = self.stabiliser(F.incidence)
        pos = -np.ones(len(Y), dtype=np.int64)
        pos[idx] = np.arange(len(idx))
        sub = np.unique(pos[stab[:, idx]], axis=0)
        remaining = None if self.deadline is None else self.deadline - time.perf_counter()
        return (Z, sub, self.direct_excess, self.depth, self.max_depth, int(self.rng.integers(1 << 30)),
                remaining), keep


def _recursive(task) -> bool:
    """Whether :func:`_ridge_job` decomposes this face again rather than taking one hull."""
    Z, sub, direct_excess, depth, max_depth, _, _ = task
    return not (len(Z) - Z.shape[1] <= direct_excess or depth >= max_depth or len(sub) <= 2)


def _hull_price(task) -> float:
    """Rough relative run time of one ridge hull, for balancing the engine's chunks: cddlib's time grows
    about twofold per three to four points beyond a simplex (measured on the 380 ridge hulls of the
    three-party Bell-local set)."""
    Z = task[0]
    return 2.0 ** (min(len(Z) - Z.shape[1], 3000) / 3)


def _ridge_job(task, width: int = 0):
    """Ridge inequalities of one face (in its own coordinates), one per stabiliser orbit, with counters.

    Small faces: one exact hull.  Large faces with a non-trivial stabiliser: the
    same decomposition one level down (Bremner, Dutour Sikirić, Schürmann), whose
    hulls go through the engine of *width* slots (0: none, all in this process).
    """
    Z, sub, direct_excess, depth, max_depth, seed, remaining = task
    stats = {"ridge hulls": 0, "recursive faces": 0, "wraps": 0}
    if not _recursive(task):
        stats["ridge hulls"] += 1
        return _hull_ints(Z, None if remaining is None else time.perf_counter() + remaining), stats
    stats["recursive faces"] += 1
    deadline = None if remaining is None else time.perf_counter() + remaining
    inner = Decomposition(Z, sub, deadline=deadline, direct_excess=direct_excess, depth=depth + 1,
                          max_depth=max_depth, seed=seed)
    inner.width = width
    inner.batch = _batch(width)
    found = [(r.a, r.b) for r in inner.run()]
    for key, v in inner.stats.items():
        stats[key] += v
    return found, stats


def _lift(found, keep: list[int], k: int) -> list[tuple[list[int], int]]:
    out = []
    for a, b in found:
        g = [0] * k
        for pos_, i in enumerate(keep):
            g[i] = int(a[pos_])
        out.append((g, int(b)))
    return out


def orbit_rows(a: tuple[int, ...], b: int, mats: np.ndarray) -> np.ndarray:
    """Every image of the facet (a, b) under the group, as distinct primitive integer rows (a, b)."""
    v = np.array(list(a) + [b], dtype=object if mats.dtype == object else np.int64)
    imgs = np.einsum("j,gjk->gk", v, mats) if mats.dtype != object else np.array([v.dot(M) for M in mats])
    if imgs.dtype == object:
        rows = [primitive(list(r)) for r in imgs]
        return np.array(sorted(set(rows)), dtype=object)
    g = np.gcd.reduce(np.abs(imgs), axis=1)
    g[g == 0] = 1
    return np.unique(imgs // g[:, None], axis=0)
