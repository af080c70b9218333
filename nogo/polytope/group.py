"""A symmetry group of a finite point set, as permutations of the points and as maps of inequalities.

The generators are coordinate permutations (relabellings of the scenario,
:mod:`nogo.symmetry`).  Each is first checked to map the point set onto
itself exactly (an image not in the set refuses the generator).  The group
they generate is enumerated by closure (breadth first) as permutations of
the points, which is the group's action on the polytope: its size is the
order reported.  Alongside each element the action on inequalities in the
frame's coordinates is kept as an integer matrix, (a, b) -> (a, b)·M up to
a positive factor, so that a class representative can be expanded into its
whole class without any hull.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

import numpy as np

from .frame import Frame
from .ints import Point, _lcm

_SAFE = 2**62


def move_matrix(frame: Frame, perm: list[int]) -> np.ndarray:
    """The action of a coordinate permutation on (a, b) in frame coordinates, as integers (a positive multiple)."""
    k = frame.dim
    rows: list[list[Fraction]] = []
    for f in frame.functionals:
        moved = [Fraction(0)] * len(f.vector)
        for i, v in enumerate(f.vector):
            if v:
                moved[perm[i]] = Fraction(v)
        lam, s = frame.reduce_raw(moved, Fraction(0))
        rows.append(lam + [s])
    rows.append([Fraction(0)] * k + [Fraction(1)])
    D = _lcm(v.denominator for r in rows for v in r)
    M = np.array([[int(v * D) for v in r] for r in rows], dtype=object)
    if int(np.max(np.abs(M))) < 2**20:
        M = M.astype(np.int64)
    return M


def _reduce(M: np.ndarray) -> np.ndarray:
    g = np.gcd.reduce(np.abs(M).ravel().astype(object) if M.dtype == object else np.abs(M).ravel())
    g = int(g) or 1
    return M // g


def _mul(A: np.ndarray, B: np.ndarray) -> np.ndarray:
    if A.dtype != object and B.dtype != object:
        amax, bmax = int(np.max(np.abs(A))), int(np.max(np.abs(B)))
        if amax * bmax * A.shape[1] < _SAFE:
            return _reduce(A @ B)
    return _reduce(A.astype(object).dot(B.astype(object)))


@dataclass
class PointGroup:
    perms: np.ndarray  # order × n: element g sends point i to perms[g, i]
    mats: np.ndarray | None  # order × (k+1) × (k+1): (a, b) -> (a, b) @ mats[g] for the same element (if asked)
    generators: list[str]  # labels of the generators used

    @property
    def order(self) -> int:
        return len(self.perms)


def _integer_points(points: list[Point]) -> np.ndarray:
    den = _lcm(Fraction(v).denominator for p in points for v in p) if points else 1
    M = np.array([[int(Fraction(v) * den) for v in p] for p in points], dtype=object)
    return M.astype(np.int64) if (not M.size or int(np.max(np.abs(M))) < 2**62) else M


def point_permutation(points: list[Point], index: dict, perm: list[int], P: np.ndarray | None = None) -> np.ndarray | None:
    """The coordinate permutation as a permutation of the points, or None when it does not map the set onto itself.

    Exact: the points as integers over one denominator, compared row by row as bytes.
    """
    if P is None:
        P = _integer_points(points)
    def key(row):
        return tuple(int(v) for v in row) if P.dtype == object else np.ascontiguousarray(row).tobytes()
    keys = {key(row): i for i, row in enumerate(P)}
    moved = np.empty_like(P)
    moved[:, np.array(perm, dtype=np.int64)] = P  # coordinate a of a point goes to perm[a]
    out = np.empty(len(points), dtype=np.int64)
    for i, row in enumerate(moved):
        j = keys.get(key(row))
        if j is None:
            return None
        out[i] = j
    return out


def enumerate_group(points: list[Point], frame: Frame, gens: list[tuple[str, list[int]]],
                    limit: int = 400_000, with_mats: bool = True) -> tuple[PointGroup, list[str]]:
    """The group the generators (label, coordinate permutation) generate on *points*; also the labels refused."""
    index = {p: i for i, p in enumerate(points)}
    n, k = len(points), frame.dim
    kept: list[tuple[str, np.ndarray, np.ndarray]] = []
    refused: list[str] = []
    P = _integer_points(points)
    for label, perm in gens:
        pp = point_permutation(points, index, perm, P)
        if pp is None:
            refused.append(label)
        else:
            kept.append((label, pp, move_matrix(frame, perm) if with_mats else np.eye(1, dtype=np.int64)))
    ident = np.arange(n, dtype=np.int64)
    I = np.eye(k + 1, dtype=np.int64)
    small = all(m.dtype != object for _, _, m in kept)
    bound = max([int(np.max(np.abs(m))) for _, _, m in kept] + [1])
    perms = [ident[None, :]]
    mats = [I[None, :, :] if small else np.array([I], dtype=object)]
    seen = {ident.tobytes()}
    frontier_p, frontier_m = perms[0], mats[0]
    count = 1
    while len(frontier_p):
        nxt_p, nxt_m = [], []
        for _, sp_, sm in kept:
            P = sp_[frontier_p]  # first the element, then the generator (one level at a time)
            fresh = []
            for i, row in enumerate(P):
                key = row.tobytes()
                if key not in seen:
                    seen.add(key)
                    fresh.append(i)
            if not fresh:
                continue
            count += len(fresh)
            if count > limit:
                raise RuntimeError(f"symmetry group larger than {limit} elements")
            if not with_mats:
                nxt_p.append(P[fresh])
                nxt_m.append(frontier_m[:0])
                continue
            Mf = frontier_m[fresh]
            mmax = int(np.max(np.abs(Mf))) if small else 0
            if small and mmax * bound * (k + 1) < _SAFE:
                prod = Mf @ sm
                g = np.gcd.reduce(np.abs(prod).reshape(len(fresh), -1), axis=1)
                g[g == 0] = 1
                prod = prod // g[:, None, None]
            else:
                prod = np.array([_mul(m, sm) for m in Mf], dtype=object)
            nxt_p.append(P[fresh])
            nxt_m.append(prod)
        if not nxt_p:
            break
        frontier_p = np.concatenate(nxt_p)
        if any(m.dtype == object for m in nxt_m):
            small = False
            frontier_m = np.concatenate([m.astype(object) for m in nxt_m])
        else:
            frontier_m = np.concatenate(nxt_m)
        perms.append(frontier_p)
        mats.append(frontier_m)
    if any(m.dtype == object for m in mats):
        M = np.concatenate([m.astype(object) for m in mats])
    else:
        M = np.concatenate(mats)
    perms = list(np.concatenate(perms))
    if not with_mats:
        M = None
    return PointGroup(np.stack(perms), M, [label for label, _, _ in kept]), refused
