"""Exact integer arithmetic on arrays: the evidence checks' number layer.

Rationals are held as an integer numerator array with one common
denominator (:class:`ExactVector`); matrices as scipy CSR arrays of integer
numerators.  Products are exact: int64 when a bound on the result proves
that no entry can overflow, otherwise the vector is split into 20-bit limbs
whose int64 products are recombined as Python integers.  No floating point
enters any result here.
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Iterable, Iterator, Sequence

import numpy as np

SAFE = 2 ** 62
_LIMB = 20


def lcm_all(values: Iterable[int]) -> int:
    out = 1
    for v in values:
        v = int(v)
        if v != 1:
            out = out * v // math.gcd(out, v)
    return out


def fits_int64(a: np.ndarray) -> bool:
    if a.dtype != object:
        return True
    if a.size == 0:
        return True
    return max(abs(int(a.max())), abs(int(a.min()))) < SAFE


def as_int(a) -> np.ndarray:
    """int64 when every entry fits, else an object array of Python ints."""
    a = np.asarray(a)
    if a.dtype == object:
        return a.astype(np.int64) if fits_int64(a) else a
    return a.astype(np.int64, copy=False)


def max_abs(a: np.ndarray) -> int:
    if a.size == 0:
        return 0
    if a.dtype == object:
        return max(abs(int(a.max())), abs(int(a.min())))
    return int(np.abs(a).max())


class ExactVector(Sequence):
    """An exact rational vector: ``num / den`` with integer ``num`` and ``den > 0``.

    Behaves as a read-only sequence of :class:`Fraction` for code written
    against lists; the checks use ``num`` and ``den`` directly.
    """

    __slots__ = ("num", "den")

    def __init__(self, num, den: int = 1):
        den = int(den)
        if den <= 0:
            raise ValueError("denominator must be positive")
        self.num = as_int(num)
        self.den = den

    @classmethod
    def from_fractions(cls, values: Sequence) -> "ExactVector":
        fr = [v if isinstance(v, Fraction) else Fraction(v) for v in values]
        den = lcm_all({f.denominator for f in fr})
        num = np.array([f.numerator * (den // f.denominator) for f in fr], dtype=object) if fr else \
            np.zeros(0, dtype=np.int64)
        return cls(num, den)

    @classmethod
    def zeros(cls, n: int) -> "ExactVector":
        return cls(np.zeros(n, dtype=np.int64), 1)

    def __len__(self) -> int:
        return len(self.num)

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [Fraction(int(x), self.den) for x in self.num[i]]
        return Fraction(int(self.num[i]), self.den)

    def __iter__(self) -> Iterator[Fraction]:
        d = self.den
        return (Fraction(int(x), d) for x in self.num)

    def __repr__(self) -> str:
        return f"ExactVector(n={len(self)}, nonzero={len(self.nonzero())}, den={self.den})"

    def __eq__(self, other) -> bool:
        if isinstance(other, ExactVector):
            return len(self) == len(other) and bool(np.all(self.num * other.den == other.num * self.den))
        try:
            return list(self) == list(other)
        except TypeError:
            return NotImplemented

    def nonzero(self) -> np.ndarray:
        return np.flatnonzero(self.num != 0)

    def fractions(self) -> list[Fraction]:
        return list(self)

    def scaled_to(self, den: int) -> np.ndarray:
        """Numerators over the multiple *den* of this vector's denominator."""
        k = int(den) // self.den
        if k * self.den != int(den):
            raise ValueError("not a multiple of the denominator")
        return mul(self.num, k)

    def normalised(self) -> "ExactVector":
        if len(self) == 0:
            return ExactVector(self.num, 1)
        nz = self.num[self.num != 0]
        g = self.den
        for x in nz.tolist():
            g = math.gcd(g, int(x))
            if g == 1:
                break
        if g == 1:
            return self
        return ExactVector(as_int(self.num // g), self.den // g)


def mul(a: np.ndarray, k: int) -> np.ndarray:
    """Exact a * k (object dtype when int64 could overflow)."""
    k = int(k)
    if k == 1:
        return a
    if a.dtype != object and max_abs(a) * abs(k) < SAFE:
        return a * k
    return as_int(a.astype(object) * k)


def matvec(A, x: np.ndarray, abs_sums: np.ndarray | None = None) -> np.ndarray:
    """Exact A @ x for a CSR matrix of int64 numerators and an integer vector."""
    if abs_sums is None:
        abs_sums = abs_row_sums(A)
    bound = (int(abs_sums.max()) if abs_sums.size else 0) * max_abs(x)
    if x.dtype != object and bound < SAFE:
        return A @ x
    xo = x.astype(object)
    out = np.zeros(A.shape[0], dtype=object)
    for part, sign in ((np.where(xo > 0, xo, 0), 1), (np.where(xo < 0, -xo, 0), -1)):
        shift = 0
        while any(part):
            limb = np.array([int(v) & ((1 << _LIMB) - 1) for v in part], dtype=np.int64)
            out = out + (A @ limb).astype(object) * (sign << shift)
            part = np.array([int(v) >> _LIMB for v in part], dtype=object)
            shift += _LIMB
    return as_int(out)


def abs_row_sums(A) -> np.ndarray:
    B = A.copy()
    B.data = np.abs(B.data)
    return np.asarray(B.sum(axis=1)).ravel().astype(np.int64)


def sub(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Exact a - b."""
    if a.dtype != object and b.dtype != object and max_abs(a) + max_abs(b) < SAFE:
        return a - b
    return as_int(a.astype(object) - b.astype(object))


def reduced_costs(arrays, AT, cost: ExactVector, y: ExactVector) -> tuple[np.ndarray, int]:
    """(R, G) with Aᵀy − c = R / G exactly, column by column.

    ``arrays`` is a :class:`nogo.model.ModelArrays`, ``AT`` its matrix
    transposed (CSR).  Row i of the system is A[i] / row_den[i].
    """
    nz = y.nonzero()
    L = lcm_all(set(arrays.row_den[nz].tolist())) if len(nz) else 1
    if L == 1:
        Z = y.num
    else:
        Z = as_int(y.num.astype(object) * (L // arrays.row_den).astype(object))
    AtZ = matvec(AT, Z)  # over y.den * L
    d1 = y.den * L
    G = d1 * cost.den // math.gcd(d1, cost.den)
    return sub(mul(AtZ, G // d1), mul(cost.num, G // cost.den)), G
