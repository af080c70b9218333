"""Exact integer helpers shared by every stage of the polytope pipeline.

Integers over one common denominator, with int64 numpy arithmetic whenever
the product bounds rule out overflow (|a|·|b|·width < 2^62) and Python
integers otherwise: exact in both cases.
"""

from __future__ import annotations

import math
from fractions import Fraction
from functools import reduce
from typing import Callable, Sequence

import flint
import numpy as np
import scipy.sparse as sp

Point = tuple[Fraction, ...]  # a behaviour in full probability coordinates
Progress = Callable[[str, int, int | None], None]  # (stage, done, total)


class PolytopeError(RuntimeError):
    """An exact check failed where the method needs it to hold (a bug, not bad input)."""


def _lcm(values) -> int:
    return reduce(lambda x, y: x * y // math.gcd(x, y), values, 1)


def primitive(ints: Sequence[int]) -> tuple[int, ...]:
    """Divide by the gcd (keeps the sign: a positive scaling of an inequality)."""
    g = reduce(math.gcd, (abs(int(v)) for v in ints), 0) or 1
    return tuple(int(v) // g for v in ints)


def _round_vector(x: np.ndarray, dens=(1, 2, 3, 4, 6, 8, 12, 24, 60, 120, 840, 2520, 27720)) -> tuple[np.ndarray, int] | None:
    """Integers X and a denominator D with X/D close to x (a guess, checked later)."""
    scale = max(1.0, float(np.max(np.abs(x))) if x.size else 1.0)
    for den in dens:
        y = x * den
        r = np.rint(y)
        if np.max(np.abs(y - r), initial=0.0) <= 1e-7 * scale * den:
            return r.astype(np.int64), den
    fr = [Fraction(float(v)).limit_denominator(10**6) if abs(v) > 1e-11 else Fraction(0) for v in x]
    den = _lcm(f.denominator for f in fr)
    if den > 10**12:
        return None
    return np.array([int(f * den) for f in fr], dtype=object), den


_SAFE = 2**62


def _int_matvec(M: sp.csr_matrix, absmax: int, v: np.ndarray) -> np.ndarray:
    """Exact M @ v for an integer sparse M and integer v (int64 when it cannot overflow)."""
    vmax = int(np.max(np.abs(v))) if v.size else 0
    width = int(np.max(np.diff(M.indptr))) if M.shape[0] else 0
    if v.dtype != object and absmax * vmax * max(width, 1) < _SAFE:
        return M @ v.astype(np.int64)
    out = np.zeros(M.shape[0], dtype=object)
    indptr, indices, data = M.indptr, M.indices, M.data
    for i in range(M.shape[0]):
        s = 0
        for k in range(indptr[i], indptr[i + 1]):
            s += int(data[k]) * int(v[indices[k]])
        out[i] = s
    return out


def _qmat(rows: list[Sequence[Fraction]], ncols: int) -> flint.fmpq_mat:
    M = flint.fmpq_mat(len(rows), ncols)
    for i, r in enumerate(rows):
        for j, v in enumerate(r):
            if v:
                v = Fraction(v)
                M[i, j] = flint.fmpq(v.numerator, v.denominator)
    return M


def _zmat(rows: list[Sequence[int]], ncols: int) -> flint.fmpz_mat:
    return flint.fmpz_mat(len(rows), ncols, [int(v) for r in rows for v in r]) if rows else flint.fmpz_mat(0, ncols)


def _frac(q) -> Fraction:
    return Fraction(int(q.p), int(q.q))


def _integer_rows(points: list[Point]) -> list[list[int]]:
    """Each row scaled by its own positive denominator (same span, integers)."""
    out = []
    for r in points:
        L = _lcm(Fraction(v).denominator for v in r)
        out.append([int(Fraction(v) * L) for v in r])
    return out

